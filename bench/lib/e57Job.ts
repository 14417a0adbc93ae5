/**
 * One E57 read in a process of its own: `tsx bench/lib/e57Job.ts <file>` reads every scan through ranged
 * reads of the local file (as the ingest reads the stored original) and prints one JSON line
 * {points, seconds, peakRssMiB}. Nothing is kept: each batch is handed on, as an ingest would.
 */
import { fileSource } from '../../server/points/sources'
import { openE57 } from '../../server/points/readers/index'

const path = process.argv[2]!
const started = performance.now()
const source = await fileSource(path)
const file = await openE57(source)
let sink = 0
// Sampled at every batch rather than taken from getrusage: a child's ru_maxrss starts from its parent's
// high-water mark on Linux (kept across fork and exec), which would report the writer's memory.
let peak = process.memoryUsage.rss()
const summary = await file.readAll({
  reuseBuffers: true,
  onBatch: (b) => {
    sink += b.positions[0]!
    peak = Math.max(peak, process.memoryUsage.rss())
  },
})
await source.close()
const seconds = (performance.now() - started) / 1000
process.stdout.write(`${JSON.stringify({ points: summary.pointCount, seconds, peakRssMiB: peak / 1048576, sink: Number.isFinite(sink) })}\n`)
