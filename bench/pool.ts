import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { monitorEventLoopDelay, PerformanceObserver } from 'node:perf_hooks'
import { setComputeInline } from '../server/compute/pool'
import { boxSolid, wallWithOpening } from '../tests/utils/solids'
import { startBenchServer } from './lib/benchServer'
import { percentile } from './lib/stats'

/**
 * Heavy checks off the event loop: a clearance of a 1 M-point object through a scanned door, POSTed to the
 * real server (in this process), while the event loop's delay is sampled (perf_hooks monitorEventLoopDelay,
 * 1 ms resolution) and a stream of small requests (GET /api/health, one every 10 ms) is timed. Run twice:
 * with the compute threads, and with every task inline on the event loop (the way before the pool).
 * Target: event-loop delay p99 under 50 ms during the clearance.
 */
export interface PoolRun {
  mode: 'threads' | 'inline'
  clearanceMs: number
  loopDelayMs: { p50: number; p99: number; max: number }
  /** The longest time between two ticks of a 1 ms timer, and the longest garbage collection. */
  longestBlockMs: number
  longestGcMs: number
  health: { count: number; p50: number; p99: number; max: number }
  outcome: string
}

export interface PoolBench {
  objectPoints: number
  threads: number
  runs: PoolRun[]
}

export async function runPoolBench(log: (l: string) => void = () => {}): Promise<PoolBench> {
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-pool-bench-'))
  const api = bench.api.bind(bench)
  const worker = await bench.startWorker()
  try {
    // The box of the door case (0.60 x 0.40 x 1.20 m, 2.88 m2 of surface) at 1.7 mm: about 1 M points, 1 mm noise;
    // a 0.2 m wall with a 0.900 x 2.000 m door.
    const boxFile = path.join(folder, 'box.ply')
    fs.writeFileSync(boxFile, boxSolid(0.6, 0.4, 1.2, 0.0017, 0.001).ply())
    const wallFile = path.join(folder, 'wall.ply')
    fs.writeFileSync(wallFile, wallWithOpening({ width: 0.9, height: 2.0, thickness: 0.2 }).ply())
    log('pool: ingesting the object and the door...')
    const box = await bench.ingest(boxFile)
    const wall = await bench.ingest(wallFile)
    const scene = (await api('POST', `/api/projects/${bench.projectId}/scenes`, { name: 'Pool bench' })).scene
    const place = async (scanId: string, t: [number, number, number]) =>
      (await api('POST', `/api/scenes/${scene.id}/instances`, { scanId, matrix: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, ...t, 1] })).instance.id as string
    const boxPlacement = await place(box.scanId, [0, -2, 0])
    const wallPlacement = await place(wall.scanId, [0, 0, 0])
    const door = (await api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'section', anchors: [{ instanceId: wallPlacement, x: -0.45, y: 0, z: 1 }, { instanceId: wallPlacement, x: 0.45, y: 0, z: 1 }], params: { plane: 'two-points', thickness: 0.1, opening: true } })).marker
    // Warm: the object's tiles read once, the threads started.
    await api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'clearance', params: { objectInstanceId: boxPlacement, sectionMarkerId: door.id } })

    const runs: PoolRun[] = []
    let objectPoints = 0
    for (const mode of ['threads', 'inline'] as const) {
      setComputeInline(mode === 'inline')
      log(`pool: a clearance of the 1 M-point object, tasks ${mode === 'threads' ? 'in the compute threads' : 'inline on the event loop'}...`)
      const delay = monitorEventLoopDelay({ resolution: 1 })
      const health: number[] = []
      let done = false
      // A request every 10 ms (or as soon as the last one is answered, if later).
      const stream = (async () => {
        while (!done) {
          const t0 = performance.now()
          await fetch(`${bench.url}/api/health`).then((r) => r.arrayBuffer())
          health.push(performance.now() - t0)
          const rest = 10 - (performance.now() - t0)
          if (rest > 0) await new Promise((r) => setTimeout(r, rest))
        }
      })()
      let gcMax = 0
      const gc = new PerformanceObserver((list) => {
        for (const e of list.getEntries()) gcMax = Math.max(gcMax, e.duration)
      })
      gc.observe({ entryTypes: ['gc'] })
      const gap = { last: performance.now(), max: 0 }
      const tick = setInterval(() => {
        const now = performance.now()
        gap.max = Math.max(gap.max, now - gap.last)
        gap.last = now
      }, 1)
      delay.enable()
      const t0 = performance.now()
      const clear = await api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'clearance', params: { objectInstanceId: boxPlacement, sectionMarkerId: door.id } })
      const clearanceMs = performance.now() - t0
      delay.disable()
      clearInterval(tick)
      gc.disconnect()
      done = true
      await stream
      objectPoints = clear.marker.check.clearance?.objectPointCount ?? 0
      const ms = (ns: number) => ns / 1e6
      runs.push({
        mode,
        clearanceMs,
        loopDelayMs: { p50: ms(delay.percentile(50)), p99: ms(delay.percentile(99)), max: ms(delay.max) },
        longestBlockMs: gap.max,
        longestGcMs: gcMax,
        health: { count: health.length, p50: percentile(health, 50), p99: percentile(health, 99), max: Math.max(...health) },
        outcome: `${clear.marker.check.state} / ${clear.marker.check.clearance?.outcome}, margin ${clear.marker.check.value?.toFixed(3)} m`,
      })
    }
    setComputeInline(false)
    return { objectPoints, threads: bench.server.config.compute.threads, runs }
  } finally {
    setComputeInline(false)
    worker.kill('SIGTERM')
    await new Promise((r) => worker.once('exit', r))
    await bench.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
}

export function formatPoolBench(r: PoolBench): string {
  const f = (x: number) => x.toFixed(1)
  return [
    `clearance of a ${(r.objectPoints / 1e6).toFixed(2)} M-point object (0.60 x 0.40 x 1.20 m box) through a 0.900 x 2.000 m door, ${r.threads} compute thread(s) on ${os.availableParallelism()} cores`,
    '| tasks | clearance | event-loop delay p50 / p99 / max | longest block (longest GC) | GET /api/health every 10 ms meanwhile: count, p50 / p99 / max | result |',
    '|---|---|---|---|---|---|',
    ...r.runs.map(
      (x) =>
        `| ${x.mode === 'threads' ? 'compute threads' : 'inline (before)'} | ${x.clearanceMs.toFixed(0)} ms | ${f(x.loopDelayMs.p50)} / ${f(x.loopDelayMs.p99)} / ${f(x.loopDelayMs.max)} ms | ${x.longestBlockMs.toFixed(0)} ms (${x.longestGcMs.toFixed(0)} ms) | ${x.health.count}, ${f(x.health.p50)} / ${f(x.health.p99)} / ${f(x.health.max)} ms | ${x.outcome} |`,
    ),
  ].join('\n')
}
