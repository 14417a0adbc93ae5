import { spawn } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import pino from 'pino'
import { loadConfig } from '../server/config'
import { SpanmarkServer } from '../server/runtime'
import { writeSyntheticLas, writeSyntheticPly, writeSyntheticXyz } from './lib/syntheticScans'

/**
 * Ingest bench: upload-complete (the 202) to ready (parsed, statistics, octree, every tile in
 * PostgreSQL) through the real server, object storage fake and a fresh worker process per file, whose
 * peak RSS (VmHWM) is the figure for memory. Targets (DESIGN section 8): binary PLY or LAS at 10 M points
 * under 6 s and 1 GB; ASCII XYZ at 10 M under 15 s.
 */
export interface IngestBenchRow {
  file: string
  points: number
  megabytes: number
  uploadSeconds: number
  readySeconds: number
  workerPeakRssMiB: number
}

const CASES = [
  { label: 'binary PLY LE', ext: 'ply', write: writeSyntheticPly },
  { label: 'LAS 1.2 fmt 0', ext: 'las', write: (p: string, n: number) => writeSyntheticLas(p, n, '1.2') },
  { label: 'ASCII XYZ', ext: 'xyz', write: writeSyntheticXyz },
]

function peakRssMiB(pid: number): number {
  const status = fs.readFileSync(`/proc/${pid}/status`, 'utf8')
  const kb = Number(/VmHWM:\s+(\d+)/.exec(status)?.[1] ?? 0)
  return kb / 1024
}

export async function runIngestBench(sizes: number[], log: (l: string) => void = () => {}): Promise<IngestBenchRow[]> {
  const databaseUrl = process.env.BENCH_DATABASE_URL
  if (!databaseUrl) throw new Error('the ingest bench needs BENCH_DATABASE_URL: run it through `npm run bench`')
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-ingest-bench-'))
  const config = {
    ...loadConfig({ SPANMARK_ENV: 'test', DATABASE_URL: databaseUrl, PORT: '0', SMTP_PORT: '0', MAIL_FAKE: '1', S3_FAKE: '1', S3_FAKE_PORT: '0', DATA_DIR: folder, WORKER: 'none', ...(process.env.LOG_LEVEL ? { LOG_LEVEL: process.env.LOG_LEVEL } : {}) }),
    uploads: { limitBytes: 4 * 1024 ** 3, lazLimitBytes: 512 * 1024 ** 2 },
  }
  const server = await SpanmarkServer.start(config, pino({ level: 'silent' }))
  const rows: IngestBenchRow[] = []
  try {
    const origin = { Origin: server.url }
    const signUp = await fetch(`${server.url}/api/auth/sign-up`, { method: 'POST', headers: { 'content-type': 'application/json', ...origin }, body: JSON.stringify({ email: 'bench@spanmark.example', password: 'bench password 1', name: 'Bench' }) })
    const cookie = signUp.headers.get('set-cookie')!.split(';')[0]!
    const headers = { cookie, ...origin }
    const project = (await (await fetch(`${server.url}/api/projects`, { method: 'POST', headers: { ...headers, 'content-type': 'application/json' }, body: JSON.stringify({ name: 'Bench' }) })).json()) as { project: { id: string } }
    for (const points of sizes) {
      for (const c of CASES) {
        const file = path.join(folder, `bench-${points}.${c.ext}`)
        const bytes = c.write(file, points)
        const label = `${c.label}, ${points / 1e6} M`
        log(`${label}: ${(bytes / 1e6).toFixed(0)} MB, uploading...`)
        const worker = spawn(process.execPath, ['--import', 'tsx', 'server/worker.ts'], { env: { ...process.env, SPANMARK_WORKER_CONFIG: JSON.stringify(server.workerConfig) }, stdio: ['ignore', process.env.LOG_LEVEL ? 'inherit' : 'ignore', 'inherit'] })
        await new Promise((r) => setTimeout(r, 2500))
        const form = new FormData()
        form.append('file', await fs.openAsBlob(file), path.basename(file))
        const t0 = performance.now()
        const res = await fetch(`${server.url}/api/projects/${project.project.id}/scans`, { method: 'POST', headers, body: form })
        const t1 = performance.now()
        const { scan } = (await res.json()) as { scan: { id: string } }
        let status = ''
        let error: string | null = null
        while (status !== 'ready' && status !== 'failed') {
          await new Promise((r) => setTimeout(r, 20))
          const row = await server.services.db.selectFrom('scans').select(['status', 'error']).where('id', '=', scan.id).executeTakeFirstOrThrow()
          status = row.status
          error = row.error
        }
        const t2 = performance.now()
        const rss = peakRssMiB(worker.pid!)
        worker.kill('SIGTERM')
        await new Promise((r) => worker.once('exit', r))
        if (status !== 'ready') throw new Error(`${label}: ${error}`)
        rows.push({ file: label, points, megabytes: bytes / 1e6, uploadSeconds: (t1 - t0) / 1000, readySeconds: (t2 - t1) / 1000, workerPeakRssMiB: rss })
        fs.rmSync(file, { force: true })
        await fetch(`${server.url}/api/scans/${scan.id}`, { method: 'DELETE', headers })
      }
    }
  } finally {
    await server.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
  return rows
}

export function formatIngestBench(rows: IngestBenchRow[]): string {
  const head = ['file', 'MB', 'upload s', 'upload-complete to ready s', 'worker peak RSS MiB']
  const body = rows.map((r) => [r.file, r.megabytes.toFixed(0), r.uploadSeconds.toFixed(2), r.readySeconds.toFixed(2), r.workerPeakRssMiB.toFixed(0)])
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i]!.length)))
  const line = (cells: string[]) => cells.map((c, i) => c.padEnd(widths[i]!)).join('  ')
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n')
}
