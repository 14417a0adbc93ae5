import { spawn, type ChildProcess } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import pino from 'pino'
import { loadConfig } from '../../server/config'
import { SpanmarkServer } from '../../server/runtime'

/**
 * A Spanmark server for the benches: the real server on a throwaway database (BENCH_DATABASE_URL from
 * scripts/bench.mjs), with its object storage fake, a signed-in person and a project; ingest workers are
 * started per measurement so that each one's peak memory is its own.
 */
export interface BenchServer {
  server: SpanmarkServer
  url: string
  headers: Record<string, string>
  projectId: string
  startWorker(): Promise<ChildProcess>
  /** A JSON request as the signed-in bench owner; throws with the answer's text on a non-2xx status. */
  api(method: string, url: string, body?: unknown): Promise<any>
  /** Uploads a file; resolves with the scan id and the seconds from the 202 to ready. */
  ingest(file: string): Promise<{ scanId: string; uploadSeconds: number; readySeconds: number }>
  stop(): Promise<void>
}

export function peakRssMiB(pid: number): number {
  const status = fs.readFileSync(`/proc/${pid}/status`, 'utf8')
  return Number(/VmHWM:\s+(\d+)/.exec(status)?.[1] ?? 0) / 1024
}

export async function startBenchServer(): Promise<BenchServer> {
  const databaseUrl = process.env.BENCH_DATABASE_URL
  if (!databaseUrl) throw new Error('the benches need BENCH_DATABASE_URL: run them through `npm run bench`')
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-bench-'))
  const base = loadConfig({ SPANMARK_ENV: 'test', DATABASE_URL: databaseUrl, PORT: '0', SMTP_PORT: '0', MAIL_FAKE: '1', S3_FAKE: '1', S3_FAKE_PORT: '0', DATA_DIR: folder, WORKER: 'none', ...(process.env.LOG_LEVEL ? { LOG_LEVEL: process.env.LOG_LEVEL } : {}) })
  // Resumable uploads with the production part size (16 MiB), not the tests' small parts.
  const config = {
    ...base,
    uploads: { limitBytes: 4 * 1024 ** 3, lazLimitBytes: 512 * 1024 ** 2, resumable: { ...base.uploads.resumable, minPartBytes: 16 * 1024 ** 2 } },
  }
  const server = await SpanmarkServer.start(config, pino({ level: process.env.LOG_LEVEL ?? 'silent' }))
  const url = server.url
  const json = { 'content-type': 'application/json', Origin: url }
  const email = `bench-${Date.now()}@spanmark.example`
  // Sign-up answers 202 with no session; the (unconfirmed) account signs in with its password.
  await fetch(`${url}/api/auth/sign-up`, { method: 'POST', headers: json, body: JSON.stringify({ email, password: 'bench password 1', name: 'Bench' }) })
  const signIn = await fetch(`${url}/api/auth/sign-in`, { method: 'POST', headers: json, body: JSON.stringify({ email, password: 'bench password 1' }) })
  const headers = { cookie: signIn.headers.get('set-cookie')!.split(';')[0]!, Origin: url }
  const project = (await (await fetch(`${url}/api/projects`, { method: 'POST', headers: { ...headers, ...json }, body: JSON.stringify({ name: 'Bench' }) })).json()) as { project: { id: string } }
  return {
    server,
    url,
    headers,
    projectId: project.project.id,
    async api(method, path, body) {
      const res = await fetch(`${url}${path}`, { method, headers: { ...headers, 'content-type': 'application/json' }, body: body === undefined ? undefined : JSON.stringify(body) })
      if (!res.ok) throw new Error(`${method} ${path}: ${res.status} ${await res.text()}`)
      return res.json()
    },
    async startWorker() {
      const worker = spawn(process.execPath, ['--import', 'tsx', 'server/worker.ts'], {
        env: { ...process.env, SPANMARK_WORKER_CONFIG: JSON.stringify(server.workerConfig) },
        stdio: ['ignore', process.env.LOG_LEVEL ? 'inherit' : 'ignore', 'inherit'],
      })
      await new Promise((r) => setTimeout(r, 2500))
      return worker
    },
    async ingest(file) {
      const form = new FormData()
      form.append('file', await fs.openAsBlob(file), path.basename(file))
      // A keep-alive socket the server closed while the file was being written fails the first write
      // (ECONNRESET before any answer); the upload is then simply sent again on a new connection.
      const send = () => fetch(`${url}/api/projects/${project.project.id}/scans`, { method: 'POST', headers, body: form })
      let t0 = performance.now()
      const res = await send().catch(() => ((t0 = performance.now()), send()))
      const t1 = performance.now()
      const { scan } = (await res.json()) as { scan: { id: string } }
      for (;;) {
        await new Promise((r) => setTimeout(r, 20))
        const row = await server.services.db.selectFrom('scans').select(['status', 'error']).where('id', '=', scan.id).executeTakeFirstOrThrow()
        if (row.status === 'failed') throw new Error(`${file}: ${row.error}`)
        if (row.status === 'ready') break
      }
      return { scanId: scan.id, uploadSeconds: (t1 - t0) / 1000, readySeconds: (performance.now() - t1) / 1000 }
    },
    async stop() {
      await server.stop()
      fs.rmSync(folder, { recursive: true, force: true })
    },
  }
}
