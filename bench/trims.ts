// Trims and stray points on a 1 M-point capture of a box standing on a floor with stray edge points
// (target: each in a few seconds on one core of this machine; the same functions run in a compute thread).
import { strayPoints } from '../shared/measure/strayPoints'
import { type TrimLike, trimMask } from '../shared/measure/trims'
import { TrimShape } from '../shared/schemas/objects'
import { mulberry32 } from '../tests/unit/measure/random'

export interface TrimBenchRow {
  points: number
  maskMs: number
  kept: number
  strayMs: number
  dropped: number
}

/** A 0.60 x 0.40 x 1.20 m box's sides and top, a 4 x 4 m floor around it, and 0.5 % stray points. */
function capture(count: number, seed = 5): Float64Array {
  const rand = mulberry32(seed)
  const xyz = new Float64Array(3 * count)
  for (let i = 0; i < count; i++) {
    const r = rand()
    let p: [number, number, number]
    if (r < 0.005) p = [(rand() - 0.5) * 2, (rand() - 0.5) * 2, rand() * 1.5]
    else if (r < 0.5) p = [(rand() - 0.5) * 4, (rand() - 0.5) * 4, 0.001 * (rand() - 0.5)]
    else {
      const f = Math.floor(rand() * 5), a = rand(), b = rand()
      p = f === 0 ? [-0.3, a * 0.4 - 0.2, b * 1.2] : f === 1 ? [0.3, a * 0.4 - 0.2, b * 1.2] : f === 2 ? [a * 0.6 - 0.3, -0.2, b * 1.2] : f === 3 ? [a * 0.6 - 0.3, 0.2, b * 1.2] : [a * 0.6 - 0.3, b * 0.4 - 0.2, 1.2]
    }
    xyz.set(p, 3 * i)
  }
  return xyz
}

export function runTrimBench(sizes: number[], log: (l: string) => void = () => {}): TrimBenchRow[] {
  const trims: TrimLike[] = [
    { mode: 'keep', shape: TrimShape.parse({ shape: 'box', centre: [0, 0, 0.6], size: [0.8, 0.6, 1.4], rotation: [0, 0, 0.1, 1] }) },
    { mode: 'keep', shape: TrimShape.parse({ shape: 'prism', origin: [0, 0, 0], u: [1, 0, 0], v: [0, 1, 0], outline: [[-0.5, -0.4], [0.5, -0.4], [0.1, 0], [0.5, 0.4], [-0.5, 0.4]], near: 0, far: 1.3 }) },
    { mode: 'cut', shape: TrimShape.parse({ shape: 'below', point: [0, 0, 0.01] }) },
  ]
  return sizes.map((points) => {
    const xyz = capture(points)
    let t = performance.now()
    const mask = trimMask(xyz, trims)
    const maskMs = performance.now() - t
    const kept = mask.reduce((a, b) => a + b, 0)
    t = performance.now()
    const stray = strayPoints(xyz, 8, 2)
    const strayMs = performance.now() - t
    log(`trims: ${points} points done`)
    return { points, maskMs, kept, strayMs, dropped: stray.dropped }
  })
}

export function formatTrimBench(rows: TrimBenchRow[]): string {
  const lines = ['| points | trim mask (2 keeps, 1 cut) | kept | stray points (k 8, n 2) | dropped |', '|---|---|---|---|---|']
  for (const r of rows) lines.push(`| ${r.points / 1e6} M | ${r.maskMs.toFixed(0)} ms | ${r.kept} | ${(r.strayMs / 1000).toFixed(2)} s | ${r.dropped} |`)
  return lines.join('\n')
}
