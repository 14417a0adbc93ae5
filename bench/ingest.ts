import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { peakRssMiB, startBenchServer } from './lib/benchServer'
import { writeSyntheticLas, writeSyntheticPly, writeSyntheticXyz } from './lib/syntheticScans'

/**
 * Ingest bench: upload-complete (the 202) to ready (parsed, statistics, octree, every tile in
 * PostgreSQL) through the real server, object storage fake and a fresh worker process per file, whose
 * peak RSS (VmHWM) is the figure for memory. Targets (DEVELOPERS.md, "Targets"): binary PLY or LAS at 10 M points
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

export async function runIngestBench(sizes: number[], log: (l: string) => void = () => {}): Promise<IngestBenchRow[]> {
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-ingest-bench-'))
  const rows: IngestBenchRow[] = []
  try {
    for (const points of sizes) {
      for (const c of CASES) {
        const file = path.join(folder, `bench-${points}.${c.ext}`)
        const bytes = c.write(file, points)
        const label = `${c.label}, ${points / 1e6} M`
        log(`${label}: ${(bytes / 1e6).toFixed(0)} MB, uploading...`)
        const worker = await bench.startWorker()
        try {
          const r = await bench.ingest(file)
          rows.push({ file: label, points, megabytes: bytes / 1e6, uploadSeconds: r.uploadSeconds, readySeconds: r.readySeconds, workerPeakRssMiB: peakRssMiB(worker.pid!) })
          await fetch(`${bench.url}/api/scans/${r.scanId}`, { method: 'DELETE', headers: bench.headers })
        } finally {
          worker.kill('SIGTERM')
          await new Promise((r) => worker.once('exit', r))
          fs.rmSync(file, { force: true })
        }
      }
    }
  } finally {
    await bench.stop()
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
