import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { startBenchServer } from './lib/benchServer'

/**
 * Resumable upload throughput on loopback: a file of `bytes` (2 GB by default) sent as the page sends it,
 * in parts of the production size (16 MiB) through presigned URLs straight to the object storage fake,
 * `parallel` at a time, each part confirmed to the server, then completed (storage joins the parts).
 * Target: at least 200 MB/s for the parts. The file is written once to the temporary folder and removed.
 */
export interface UploadBenchRow {
  bytes: number
  parts: number
  partBytes: number
  parallel: number
  partsSeconds: number
  completeSeconds: number
}

export async function runUploadBench(bytes = 2e9, parallel = 4, log: (l: string) => void = () => {}): Promise<UploadBenchRow> {
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-upload-bench-'))
  const file = path.join(folder, 'station.bin')
  // Random-looking bytes (the content is never processed here: the scan is not ingested).
  const chunk = Buffer.alloc(16 * 1024 ** 2)
  for (let i = 0; i < chunk.length; i += 4) chunk.writeUInt32LE((i * 2654435761) >>> 0, i)
  const fd = fs.openSync(file, 'w')
  for (let written = 0; written < bytes; ) {
    const n = Math.min(chunk.length, bytes - written)
    fs.writeSync(fd, chunk, 0, n)
    written += n
  }
  fs.closeSync(fd)
  log(`upload bench: ${bytes} bytes written to ${file}`)
  const b = await startBenchServer()
  try {
    const blob = await fs.openAsBlob(file)
    const t0 = performance.now()
    const { upload } = await b.api('POST', `/api/projects/${b.projectId}/uploads`, { fileName: 'station.bin', sizeBytes: bytes, lastModified: 1 })
    const queue = Array.from({ length: upload.partCount }, (_, i) => i + 1)
    const lane = async () => {
      for (let n = queue.shift(); n !== undefined; n = queue.shift()) {
        const { urls } = await b.api('POST', `/api/uploads/${upload.id}/part-urls`, { parts: [n] })
        const part = blob.slice((n - 1) * upload.partSize, n * upload.partSize)
        const res = await fetch(urls[0].url, { method: 'PUT', body: part, headers: { 'content-length': String(part.size) } })
        if (!res.ok) throw new Error(`part ${n}: ${res.status} ${await res.text()}`)
        await b.api('PUT', `/api/uploads/${upload.id}/parts/${n}`, { etag: res.headers.get('etag'), sizeBytes: part.size })
      }
    }
    await Promise.all(Array.from({ length: parallel }, lane))
    const t1 = performance.now()
    await b.api('POST', `/api/uploads/${upload.id}/complete`)
    const t2 = performance.now()
    return { bytes, parts: upload.partCount, partBytes: upload.partSize, parallel, partsSeconds: (t1 - t0) / 1000, completeSeconds: (t2 - t1) / 1000 }
  } finally {
    await b.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
}

export function formatUploadBench(r: UploadBenchRow): string {
  const mbps = (s: number) => (r.bytes / 1e6 / s).toFixed(0)
  return [
    `${(r.bytes / 1e9).toFixed(2)} GB in ${r.parts} parts of ${r.partBytes / 1024 ** 2} MiB, ${r.parallel} at a time:`,
    `  parts sent and confirmed: ${r.partsSeconds.toFixed(2)} s, ${mbps(r.partsSeconds)} MB/s (target >= 200 MB/s)`,
    `  complete (the storage fake joins the parts into one file): ${r.completeSeconds.toFixed(2)} s`,
    `  create to complete: ${mbps(r.partsSeconds + r.completeSeconds)} MB/s`,
  ].join('\n')
}
