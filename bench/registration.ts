/**
 * Registration figures: the closed-form fit (shared/measure/registration.ts) on 1 000 tie-point pairs, p50
 * and p99 over repeats, by SVD (the default) and by Horn's quaternion; and ICP (server/registration/icp.ts)
 * of two 1 M-point synthetic scans of one room (bench/lib/roomScan.ts, different seeds: two samplings of the
 * same surfaces, 1.5 mm range noise), the moving one displaced by a known 2-degree, 5 cm transform and
 * refined from the identity. Reported: building the target (grid only; every normal fitted up front is
 * timed apart, since a run fits only the normals it pairs with), the ICP run, iterations, final RMS,
 * overlap, and how far the result is from the known transform at the room's corners.
 *
 * End to end through the server (`runRegistrationServiceBench`, needs the bench database): the same two
 * scans written as binary PLY, ingested, placed (the moving one at the identity, 2 degrees and 5 cm off),
 * refined by POST /api/scenes/:sceneId/registrations/refine and polled until done (reading both scans'
 * points from PostgreSQL through the scan indexes, building the target, ICP), then accepted.
 *
 * Run: npx tsx bench/index.ts --only registration   (or npx tsx bench/registration.ts [points])
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { pathToFileURL } from 'node:url'
import { writeBinaryPly } from '../server/points/writers/plyWriter'
import { startBenchServer } from './lib/benchServer'
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

export interface RegistrationServiceBench {
  points: number
  /** From the refine request to the poll that saw it done, ms (points read, target built, ICP). */
  refineMs: number
  /** ICP's own seconds as the job measured them. */
  jobMs: number
  iterations: number
  converged: boolean
  finalRmsMm: number
  overlap: number
  cornerErrorMm: number
  /** POST accept: the placement set through the scene service, its markers scheduled, the record written. */
  acceptMs: number
  /** The poll's answer time while the job ran, p50 and max (the event loop stays free), ms. */
  pollMs: [number, number]
}

export async function runRegistrationServiceBench(log: (line: string) => void = () => {}, points = 1_000_000): Promise<RegistrationServiceBench> {
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-registration-bench-'))
  const api = bench.api.bind(bench)
  const worker = await bench.startWorker()
  try {
    const truth = composeTransform({ translation: [0.03, -0.04, 0.01], rotationDegrees: { x: 0.4, y: -0.3, z: 2 } })
    const held = syntheticScan(points, 11)
    const movingScan = syntheticScan(points, 12)
    const inverse = invertRigid(truth)
    const moving = new Float64Array(movingScan.count * 3)
    for (let i = 0; i < movingScan.count; i++) moving.set(transformPoint(inverse, movingScan.positions[3 * i]!, movingScan.positions[3 * i + 1]!, movingScan.positions[3 * i + 2]!), 3 * i)
    const heldFile = path.join(folder, 'held.ply'), movingFile = path.join(folder, 'moving.ply')
    fs.writeFileSync(heldFile, writeBinaryPly({ count: held.count, positions: held.positions.slice(0, held.count * 3) }, ['bench held']))
    fs.writeFileSync(movingFile, writeBinaryPly({ count: movingScan.count, positions: moving }, ['bench moving']))
    log(`registration: ingesting two ${points / 1e6} M-point scans...`)
    const a = await bench.ingest(heldFile)
    const b = await bench.ingest(movingFile)
    const { scene } = await api('POST', `/api/projects/${bench.projectId}/scenes`, { name: 'Registration bench' })
    const heldId = (await api('POST', `/api/scenes/${scene.id}/instances`, { scanId: a.scanId })).instance.id
    const movingId = (await api('POST', `/api/scenes/${scene.id}/instances`, { scanId: b.scanId })).instance.id
    log('registration: refining through the server...')
    const t0 = performance.now()
    const started = await api('POST', `/api/scenes/${scene.id}/registrations/refine`, { movingInstanceId: movingId, heldInstanceId: heldId, maxDistance: 0.15 })
    const polls: number[] = []
    let r = started.registration
    while (r.refine.status === 'running') {
      await new Promise((res) => setTimeout(res, 50))
      const p0 = performance.now()
      r = (await api('GET', `/api/registrations/${r.id}`)).registration
      polls.push(performance.now() - p0)
    }
    const refineMs = performance.now() - t0
    if (r.refine.status !== 'done') throw new Error(`refinement ${r.refine.status}: ${r.refine.reason}`)
    const residual = multiplyRigid(invertRigid(r.matrixAfter), truth)
    let cornerError = 0
    for (const c of ROOM_CORNERS) {
      const p = transformPoint(residual, ...c)
      cornerError = Math.max(cornerError, Math.hypot(p[0] - c[0], p[1] - c[1], p[2] - c[2]))
    }
    const t1 = performance.now()
    await api('POST', `/api/registrations/${r.id}/accept`)
    const acceptMs = performance.now() - t1
    return {
      points,
      refineMs,
      jobMs: r.refine.seconds * 1000,
      iterations: r.refine.iterations.length - 1,
      converged: r.refine.converged,
      finalRmsMm: r.refine.finalRms * 1000,
      overlap: r.refine.overlap,
      cornerErrorMm: cornerError * 1000,
      acceptMs,
      pollMs: [percentile(polls, 50), Math.max(...polls)],
    }
  } finally {
    worker.kill()
    await bench.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
}

export function formatRegistrationServiceBench(r: RegistrationServiceBench): string {
  return (
    `through the server, two ${r.points / 1e6} M-point scans: refine request to done ${(r.refineMs / 1000).toFixed(2)} s (the job ${(r.jobMs / 1000).toFixed(2)} s: points from PostgreSQL, target, ICP), ` +
    `${r.iterations} iterations, ${r.converged ? 'converged' : 'not converged'}, RMS ${r.finalRmsMm.toFixed(2)} mm, overlap ${(r.overlap * 100).toFixed(1)} %, corner error ${r.cornerErrorMm.toFixed(3)} mm; ` +
    `polls while it ran p50 ${r.pollMs[0].toFixed(1)} ms, max ${r.pollMs[1].toFixed(1)} ms; accept ${r.acceptMs.toFixed(0)} ms`
  )
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const points = Number(process.argv[2] ?? 1_000_000)
  console.log(formatRegistrationBench(await runRegistrationBench((l) => process.stderr.write(`${l}\n`), points)))
}
