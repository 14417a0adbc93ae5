import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { peakRssMiB, startBenchServer } from './lib/benchServer'
import { writeSyntheticLas } from './lib/syntheticScans'

/**
 * Export bench: a processed scan placed twice in a scene (the second turned and moved), exported as LAS 1.4,
 * E57 and PLY through the real server, worker and object storage fake: seconds from the request to a ready
 * file, and the peak RSS (VmHWM) of a fresh worker process that did only that export. The job reads one
 * stored tile at a time, so the worker's memory should not grow with the point count.
 */
export interface ExportBenchRow {
  label: string
  points: number
  megabytes: number
  seconds: number
  workerPeakRssMiB: number
}

export async function runExportBench(sizes: number[], log: (l: string) => void = () => {}): Promise<ExportBenchRow[]> {
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-export-bench-'))
  const rows: ExportBenchRow[] = []
  try {
    for (const points of sizes) {
      const file = path.join(folder, `bench-${points}.las`)
      writeSyntheticLas(file, points, '1.2')
      const ingestWorker = await bench.startWorker()
      let scanId: string
      try {
        scanId = (await bench.ingest(file)).scanId
      } finally {
        ingestWorker.kill('SIGTERM')
        await new Promise((r) => ingestWorker.once('exit', r))
        fs.rmSync(file, { force: true })
      }
      const scene = (await bench.api('POST', `/api/projects/${bench.projectId}/scenes`, { name: `Export bench ${points}` })).scene
      await bench.api('POST', `/api/scenes/${scene.id}/instances`, { scanId })
      const c = Math.cos(0.4)
      const s = Math.sin(0.4)
      await bench.api('POST', `/api/scenes/${scene.id}/instances`, { scanId, matrix: [c, s, 0, 0, -s, c, 0, 0, 0, 0, 1, 0, 40, 5, 0, 1] })
      for (const format of ['las', 'e57', 'ply'] as const) {
        const worker = await bench.startWorker()
        try {
          const t0 = performance.now()
          const created = (await bench.api('POST', `/api/scenes/${scene.id}/exports`, { format })).export
          let done
          for (;;) {
            await new Promise((r) => setTimeout(r, 50))
            done = (await bench.api('GET', `/api/exports/${created.id}`)).export
            if (done.status === 'failed') throw new Error(`${format} export: ${done.error}`)
            if (done.status === 'ready') break
          }
          const label = `${format.toUpperCase()}, scene of 2 x ${points / 1e6} M`
          rows.push({ label, points: done.pointCount, megabytes: done.byteSize / 1e6, seconds: (performance.now() - t0) / 1000, workerPeakRssMiB: peakRssMiB(worker.pid!) })
          log(`${label}: ${rows.at(-1)!.seconds.toFixed(2)} s`)
        } finally {
          worker.kill('SIGTERM')
          await new Promise((r) => worker.once('exit', r))
        }
      }
      await bench.api('DELETE', `/api/scenes/${scene.id}`).catch(() => {})
    }
  } finally {
    await bench.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
  return rows
}

export function formatExportBench(rows: ExportBenchRow[]): string {
  const head = ['export', 'points', 'MB', 'request to ready s', 'M points/s', 'worker peak RSS MiB']
  const body = rows.map((r) => [r.label, String(r.points), r.megabytes.toFixed(0), r.seconds.toFixed(2), (r.points / r.seconds / 1e6).toFixed(2), r.workerPeakRssMiB.toFixed(0)])
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i]!.length)))
  const line = (cells: string[]) => cells.map((c, i) => c.padEnd(widths[i]!)).join('  ')
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n')
}
