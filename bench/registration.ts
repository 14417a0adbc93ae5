/**
 * Registration figures: the closed-form fit (shared/measure/registration.ts) on 1 000 tie-point pairs, p50
 * and p99 over repeats, by SVD (the default) and by Horn's quaternion; and ICP (server/registration/icp.ts)
 * of two 1 M-point synthetic scans of one room (bench/lib/roomScan.ts, different seeds: two samplings of the
 * same surfaces, 1.5 mm range noise), the moving one displaced by a known 2-degree, 5 cm transform and
 * refined from the identity. Reported: building the target (grid only; every normal fitted up front is
 * timed apart, since a run fits only the normals it pairs with), the ICP run, iterations, final RMS,
 * overlap, and how far the result is from the known transform at the room's corners.
 *
 * Run: npx tsx bench/index.ts --only registration   (or npx tsx bench/registration.ts [points])
 */
import { pathToFileURL } from 'node:url'
import { invertRigid, multiplyRigid, transformPoint } from '@shared/geometry/rigidTransform'
import { composeTransform, fitRigid, type TiePair } from '@shared/measure/registration'
import { buildIcpTarget, refineIcp } from '../server/registration/icp'
import { createRandom, gaussian } from '../server/points/stats/random'
import { syntheticScan } from './lib/roomScan'
import { percentile } from './lib/stats'

export interface RegistrationBench {
  pairs: number
  repeats: number
  svdMs: [number, number]
  hornMs: [number, number]
  fitRmsMm: number
  points: number
  targetBuildMs: number
  allNormalsMs: number
  icpMs: number
  iterations: number
  sampleCount: number
  normalsFitted: number
  converged: boolean
  reason: string
  finalRmsMm: number
  pointRmsMm: number
  overlap: number
  /** Largest distance between where the result and the known transform put the room's corners, mm. */
  cornerErrorMm: number
}

const ROOM_CORNERS: [number, number, number][] = []
for (const x of [0, 12]) for (const y of [0, 9]) for (const z of [0, 3.2]) ROOM_CORNERS.push([x, y, z])

function timedSync<T>(run: () => T): [T, number] {
  const start = performance.now()
  const value = run()
  return [value, performance.now() - start]
}

function closedFormFigures(pairCount: number, repeats: number) {
  const random = createRandom(5)
  const truth = composeTransform({ translation: [12.5, -3.1, 0.4], rotationDegrees: { x: 1.5, y: -0.8, z: 37 } })
  const pairs: TiePair[] = Array.from({ length: pairCount }, () => {
    const moving: [number, number, number] = [random() * 40, random() * 30, random() * 6]
    const held = transformPoint(truth, ...moving).map((c) => c + 0.002 * gaussian(random))
    return { moving, held }
  })
  const svd: number[] = [], horn: number[] = []
  let rms = 0
  // Warm-up, so the percentiles describe compiled code rather than the first calls.
  for (let r = 0; r < 50; r++) fitRigid(pairs, r % 2 ? 'svd' : 'horn')
  for (let r = 0; r < repeats; r++) {
    const [fit, ms] = timedSync(() => fitRigid(pairs, 'svd'))
    svd.push(ms)
    if (fit.ok) rms = fit.rms
    horn.push(timedSync(() => fitRigid(pairs, 'horn'))[1])
  }
  return { svd: [percentile(svd, 50), percentile(svd, 99)] as [number, number], horn: [percentile(horn, 50), percentile(horn, 99)] as [number, number], rms }
}

export async function runRegistrationBench(log: (line: string) => void = () => {}, points = 1_000_000): Promise<RegistrationBench> {
  const pairCount = 1000, repeats = 300
  log(`registration: closed form on ${pairCount} pairs x ${repeats}...`)
  const closed = closedFormFigures(pairCount, repeats)

  log(`registration: two ${points / 1e6} M-point scans...`)
  const held = syntheticScan(points, 11)
  const movingScan = syntheticScan(points, 12)
  const truth = composeTransform({ translation: [0.03, -0.04, 0.01], rotationDegrees: { x: 0.4, y: -0.3, z: 2 } })
  // The moving scan as its own station would store it: the room seen through the inverse of `truth`.
  const inverse = invertRigid(truth)
  const moving = new Float64Array(movingScan.count * 3)
  const mp = movingScan.positions
  for (let i = 0; i < movingScan.count; i++) moving.set(transformPoint(inverse, mp[3 * i]!, mp[3 * i + 1]!, mp[3 * i + 2]!), 3 * i)
  const heldPoints = held.positions.slice(0, held.count * 3)

  const [target, targetBuildMs] = timedSync(() => buildIcpTarget(heldPoints))
  log('registration: ICP...')
  const t0 = performance.now()
  const result = await refineIcp(target, moving, { maxDistance: 0.15 })
  const icpMs = performance.now() - t0
  const normalsFitted = target.fittedNormals()
  const [, allNormalsMs] = timedSync(() => buildIcpTarget(heldPoints, { eagerNormals: true }))

  // Error at the corners: result^-1 truth should be the identity.
  const residual = multiplyRigid(invertRigid(result.matrix), truth)
  let cornerError = 0
  for (const c of ROOM_CORNERS) {
    const p = transformPoint(residual, ...c)
    cornerError = Math.max(cornerError, Math.hypot(p[0] - c[0], p[1] - c[1], p[2] - c[2]))
  }
  const last = result.iterations[result.iterations.length - 1]!
  return {
    pairs: pairCount,
    repeats,
    svdMs: closed.svd,
    hornMs: closed.horn,
    fitRmsMm: closed.rms * 1000,
    points,
    targetBuildMs,
    allNormalsMs,
    icpMs,
    iterations: result.iterations.length - 1,
    sampleCount: result.sampleCount,
    normalsFitted,
    converged: result.converged,
    reason: result.reason,
    finalRmsMm: result.finalRms * 1000,
    pointRmsMm: last.pointRms * 1000,
    overlap: result.overlap,
    cornerErrorMm: cornerError * 1000,
  }
}

export function formatRegistrationBench(r: RegistrationBench): string {
  const ms = (x: number) => `${x.toFixed(x < 10 ? 3 : 0)} ms`
  return [
    `closed form, ${r.pairs} pairs (2 mm noise), ${r.repeats} repeats: SVD p50 ${ms(r.svdMs[0])} p99 ${ms(r.svdMs[1])}; Horn p50 ${ms(r.hornMs[0])} p99 ${ms(r.hornMs[1])}; RMS ${r.fitRmsMm.toFixed(2)} mm`,
    `ICP, two ${r.points / 1e6} M-point scans of one room, start 2 degrees and 5 cm off: target built in ${ms(r.targetBuildMs)} (grid; fitting all ${r.points / 1e6} M normals up front would take ${ms(r.allNormalsMs)}), ` +
      `ICP ${ms(r.icpMs)} over ${r.sampleCount} moving points, ${r.iterations} iterations, ${r.normalsFitted} normals fitted on demand`,
    `  ${r.converged ? 'converged' : 'not converged'} (${r.reason}); point-to-plane RMS ${r.finalRmsMm.toFixed(2)} mm (point-to-point ${r.pointRmsMm.toFixed(2)} mm), overlap ${(r.overlap * 100).toFixed(1)} %; ` +
      `largest error at the room's corners against the known transform ${r.cornerErrorMm.toFixed(3)} mm`,
  ].join('\n')
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const points = Number(process.argv[2] ?? 1_000_000)
  console.log(formatRegistrationBench(await runRegistrationBench((l) => process.stderr.write(`${l}\n`), points)))
}
