import { closeSync, openSync, readFileSync, readSync, statSync } from 'node:fs'
import { basename } from 'node:path'
import { pathToFileURL } from 'node:url'

/**
 * One measurement in a process of its own, so that each peak RSS belongs to one parser only:
 *   tsx bench/lib/parseJob.ts <spanmark|three-ply|loaders-las> <file>
 * prints one JSON line {points, seconds, peakRssMiB}. Time runs from opening the file to the last point
 * (module loading excluded).
 */

export interface JobResult {
  points: number
  seconds: number
  peakRssMiB: number
}

const CHUNK = 1 << 20

async function spanmark(path: string): Promise<() => Promise<number>> {
  const { createReader, detectFormat, SNIFF_BYTES } = await import('../../server/points/readers/index')
  return async () => {
  const fd = openSync(path, 'r')
  try {
    const chunk = new Uint8Array(CHUNK)
    let got = readSync(fd, chunk, 0, CHUNK, null)
    const format = detectFormat(chunk.subarray(0, Math.min(got, SNIFF_BYTES)), basename(path))
    let sink = 0
    // Reused batch arrays: the bench keeps nothing, like an ingest that hands each batch on.
    const reader = createReader(format, {
      byteLength: statSync(path).size,
      reuseBuffers: true,
      onBatch: (batch) => {
        sink += batch.positions[0] as number
      },
    })
    while (got > 0) {
      reader.push(chunk.subarray(0, got))
      got = readSync(fd, chunk, 0, CHUNK, null)
    }
    const summary = await reader.end()
    if (Number.isNaN(sink)) throw new Error('unreachable')
    return summary.pointCount
  } finally {
    closeSync(fd)
  }
  }
}

async function threePly(path: string): Promise<() => Promise<number>> {
  const { PLYLoader } = await import('three/examples/jsm/loaders/PLYLoader.js')
  return async () => {
  const bytes = readFileSync(path)
  const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer
  const geometry = new PLYLoader().parse(buffer)
  return geometry.getAttribute('position').count
  }
}

async function loadersLas(path: string): Promise<() => Promise<number>> {
  const { parse } = await import('@loaders.gl/core')
  const { LASLoader, LAZRsLoader } = await import('@loaders.gl/las')
  // LASLoader (laz-perf) stops at LAS 1.3; LAZRs reads 1.4 once its wasm is initialised by hand.
  const { createRequire } = await import('node:module')
  const { dirname, join } = await import('node:path')
  const folder = join(dirname(createRequire(import.meta.url).resolve('@loaders.gl/las')), 'libs', 'laz-rs-wasm')
  const glue = (await import(pathToFileURL(join(folder, 'laz_rs_wasm.js')).href)) as {
    initSync: (input: { module: BufferSource }) => unknown
  }
  glue.initSync({ module: readFileSync(join(folder, 'laz_rs_wasm_bg.wasm')) })
  return async () => {
    const bytes = readFileSync(path)
    const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer
    const minor = bytes[25] as number
    const options = { worker: false, las: { fp64: true, colorDepth: 16 } }
    const loader = minor >= 4 ? LAZRsLoader : LASLoader
    const mesh = (await parse(buffer, loader, options)) as { header: { vertexCount: number } }
    return mesh.header.vertexCount
  }
}

/** Each job loads its modules first (not timed), then returns the timed run. */
const JOBS: Record<string, (path: string) => Promise<() => Promise<number>>> = {
  spanmark,
  'three-ply': threePly,
  'loaders-las': loadersLas,
}

async function main(): Promise<void> {
  const [kind, path] = process.argv.slice(2)
  const job = kind ? JOBS[kind] : undefined
  if (!job || !path) throw new Error('usage: parseJob.ts <spanmark|three-ply|loaders-las> <file>')
  const run = await job(path)
  const start = performance.now()
  const points = await run()
  const seconds = (performance.now() - start) / 1000
  const peakRssMiB = process.resourceUsage().maxRSS / 1024
  const result: JobResult = { points, seconds, peakRssMiB }
  process.stdout.write(`${JSON.stringify(result)}\n`)
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  main().catch((error: unknown) => {
    process.stderr.write(`${error instanceof Error ? (error.stack ?? error.message) : String(error)}\n`)
    process.exit(1)
  })
}
