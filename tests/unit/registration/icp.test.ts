// Point-to-plane ICP (server/registration/icp.ts). Sources beside each check: Besl and McKay 1992 (IEEE
// TPAMI 14(2); RMS never increases, from memory), Chen and Medioni 1992 (point-to-plane), Low
// 2004 (small-angle step), Rusinkiewicz and Levoy 2001 (distance rejection, from memory), Shakarji 1998
// (PCA normals); reference library: ml-matrix (eigenvectors), and brute-force nearest neighbours (the index
// must agree with brute force: common practice). The synthetic room corner is invented test data.
import { describe, expect, it } from 'vitest'
import { EigenvalueDecomposition, Matrix } from 'ml-matrix'
import { IDENTITY, invertRigid, multiplyRigid, transformPoint } from '@shared/geometry/rigidTransform'
import { composeTransform, fitRigid } from '@shared/measure/registration'
import { buildIcpTarget, refineIcp, type IcpIteration, type IcpProgress } from '../../../server/registration/icp'
import { mulberry32, normal } from '../measure/random'

type V = [number, number, number]

const SIGMA = 0.001
const COLUMN = { x: 2.5, y: 2.5, r: 0.3, h: 2 }

/**
 * A room corner: a 4 x 4 m floor (z = 0), walls x = 0 and y = 0 (4 x 3 m), and a column (radius 0.3 m,
 * 2 m high) for curvature, sampled uniformly by area with Gaussian noise sigma per coordinate. Different
 * seeds sample the same surfaces differently, as two stations would.
 */
function roomCorner(count: number, seed: number, sigma = SIGMA): Float64Array {
  const rand = mulberry32(seed)
  const gauss = normal(rand)
  const areas = [16, 12, 12, 2 * Math.PI * COLUMN.r * COLUMN.h]
  const total = areas.reduce((a, b) => a + b)
  const out = new Float64Array(count * 3)
  for (let i = 0; i < count; ) {
    let pick = rand() * total, s = 0
    while (s < 3 && pick > areas[s]!) pick -= areas[s++]!
    let p: V
    if (s === 0) p = [4 * rand(), 4 * rand(), 0]
    else if (s === 1) p = [0, 4 * rand(), 3 * rand()]
    else if (s === 2) p = [4 * rand(), 0, 3 * rand()]
    else {
      const a = 2 * Math.PI * rand()
      p = [COLUMN.x + COLUMN.r * Math.cos(a), COLUMN.y + COLUMN.r * Math.sin(a), COLUMN.h * rand()]
    }
    // The floor under the column is not scanned.
    if (s === 0 && Math.hypot(p[0] - COLUMN.x, p[1] - COLUMN.y) < COLUMN.r) continue
    out.set([p[0] + sigma * gauss(), p[1] + sigma * gauss(), p[2] + sigma * gauss()], 3 * i)
    i++
  }
  return out
}

/** The points as the moving station stores them: the scene seen through the inverse of `truth`. */
function seenFrom(truth: readonly number[], scene: Float64Array): Float64Array {
  const inverse = invertRigid(truth)
  const out = new Float64Array(scene.length)
  for (let i = 0; i < scene.length; i += 3) out.set(transformPoint(inverse, scene[i]!, scene[i + 1]!, scene[i + 2]!), i)
  return out
}

const CORNERS: V[] = []
for (const x of [0, 4]) for (const y of [0, 4]) for (const z of [0, 3]) CORNERS.push([x, y, z])

/** Largest distance between where `found` and `truth` put the box's corners (scene frame), metres. */
function cornerError(found: readonly number[], truth: readonly number[]): number {
  const residual = multiplyRigid(invertRigid(found), truth)
  return Math.max(...CORNERS.map((c) => Math.hypot(...transformPoint(residual, ...c).map((v, a) => v - c[a]!))))
}

function expectNeverIncreasing(iterations: IcpIteration[]): void {
  for (let k = 1; k < iterations.length; k++) expect(iterations[k]!.rms).toBeLessThanOrEqual(iterations[k - 1]!.rms)
}

const TARGET_POINTS = 40_000
const MOVING_POINTS = 25_000
const target = buildIcpTarget(roomCorner(TARGET_POINTS, 1))
const surface = roomCorner(MOVING_POINTS, 2)
// A known small transform: 3 degrees about a tilted axis, a few centimetres.
const TRUTH = composeTransform({ translation: [0.04, -0.03, 0.02], rotationDegrees: { x: 0.9, y: -1.5, z: 2.4 } })
const moving = seenFrom(TRUTH, surface)

/**
 * Tolerance on the recovered transform, from sigma and n. The point-to-plane residual combines the moving
 * point's noise and the target point's (sqrt 2 sigma), plus the fitted normal's tilt times the sideways
 * offset between the two samplings: allow sigma_r = 1.5 sqrt(2) sigma. Each wall's normal direction is held
 * by at least a quarter of the n moving points (12 of the 47.8 m2 each), so the translation along it has a
 * standard deviation of at most sigma_t = sigma_r / sqrt(n / 4); a rotation, moving points at lever rho
 * (the sample's RMS radius), at most sigma_w = sigma_t / rho. At a corner r from the centroid the error is
 * then below 5 sqrt(3) (sigma_t + sigma_w r): five standard deviations on each of three axes.
 */
function tolerance(points: Float64Array): number {
  const n = points.length / 3
  const c = [0, 1, 2].map((a) => points.filter((_, i) => i % 3 === a).reduce((s, v) => s + v, 0) / n)
  let r2 = 0
  for (let i = 0; i < points.length; i += 3) r2 += (points[i]! - c[0]!) ** 2 + (points[i + 1]! - c[1]!) ** 2 + (points[i + 2]! - c[2]!) ** 2
  const rho = Math.sqrt(r2 / n)
  const sigmaT = (1.5 * Math.SQRT2 * SIGMA) / Math.sqrt(n / 4)
  const rMax = Math.max(...CORNERS.map((k) => Math.hypot(k[0] - c[0]!, k[1] - c[1]!, k[2] - c[2]!)))
  return 5 * Math.sqrt(3) * (sigmaT + (sigmaT / rho) * rMax)
}

describe('the ICP target: normals from k-nearest plane fits (Shakarji 1998)', () => {
  it('agrees with a brute-force neighbourhood and ml-matrix eigenvectors, and finds the floor and walls', () => {
    const small = buildIcpTarget(roomCorner(3000, 9), { neighbours: 10 })
    const p = small.points
    for (let i = 0; i < 300; i += 7) {
      const d = Array.from({ length: small.count }, (_, j) => [(p[3 * j]! - p[3 * i]!) ** 2 + (p[3 * j + 1]! - p[3 * i + 1]!) ** 2 + (p[3 * j + 2]! - p[3 * i + 2]!) ** 2, j] as const)
      const nearest = d.sort((a, b) => a[0] - b[0]).slice(0, 10).map(([, j]) => [p[3 * j]!, p[3 * j + 1]!, p[3 * j + 2]!])
      const centred = new Matrix(nearest)
      centred.subRowVector(centred.mean('column'))
      const evd = new EigenvalueDecomposition(centred.transpose().mmul(centred), { assumeSymmetric: true })
      const values = evd.realEigenvalues
      const smallest = values.indexOf(Math.min(...values))
      const reference = evd.eigenvectorMatrix.getColumn(smallest)
      const ours = small.normalAt(i)!
      // Same line, either sign; float32 storage.
      expect(Math.abs(ours[0] * reference[0]! + ours[1] * reference[1]! + ours[2] * reference[2]!)).toBeCloseTo(1, 6)
    }
    // Points on the floor (z ~ 0, away from the walls and column) have normals near +-z.
    let floor = 0
    for (let i = 0; i < small.count && floor < 50; i++) {
      const x = p[3 * i]!, y = p[3 * i + 1]!, z = p[3 * i + 2]!
      if (Math.abs(z) > 0.01 || x < 0.3 || y < 0.3 || Math.hypot(x - COLUMN.x, y - COLUMN.y) < 0.6) continue
      expect(Math.abs(small.normalAt(i)![2])).toBeGreaterThan(0.98)
      floor++
    }
    expect(floor).toBe(50)
  })

  it('has no normal where the neighbours are collinear (a lone scan line)', () => {
    const line = new Float64Array(60)
    for (let i = 0; i < 20; i++) line.set([i * 0.01, 0, 0], 3 * i)
    expect(buildIcpTarget(line, { neighbours: 5 }).normalAt(10)).toBeNull()
  })
})

describe('point-to-plane ICP on a room corner (Chen and Medioni 1992; Low 2004)', () => {
  it('converges from a 3-degree, 5 cm start to the known transform within the derived tolerance', async () => {
    const progress: IcpProgress[] = []
    const result = await refineIcp(target, moving, { maxDistance: 0.2, onProgress: (p) => progress.push(p) })
    expect(result.converged).toBe(true)
    expect(cornerError(IDENTITY, TRUTH)).toBeGreaterThan(0.15)
    expect(cornerError(result.matrix, TRUTH)).toBeLessThan(tolerance(moving))
    // RMS never increases between iterations (Besl and McKay 1992; here by construction).
    expectNeverIncreasing(result.iterations)
    expect(result.iterations.length).toBeGreaterThan(2)
    expect(progress.map((p) => p.iteration)).toEqual(result.iterations.map((_, k) => k))
    expect(progress.map(({ iteration, ...rest }) => rest)).toEqual(result.iterations)
    expect(result.finalRms).toBe(result.iterations.at(-1)!.rms)
    // Converged point-to-plane RMS: two noisy points along the normal, sqrt(2) sigma, plus the normal's tilt.
    expect(result.finalRms).toBeGreaterThan(Math.SQRT2 * SIGMA)
    expect(result.finalRms).toBeLessThan(1.5 * Math.SQRT2 * SIGMA)
    expect(result.overlap).toBe(1)
    expect(result.sampleCount).toBe(MOVING_POINTS)
  })

  it('refines the closed-form fit from four tie points picked to 5 mm (the product path)', async () => {
    const rand = mulberry32(5)
    const gauss = normal(rand)
    const picks: V[] = [[0.02, 1, 2], [3, 0.01, 2.5], [3.5, 3.2, 0.01], [2.5, 2.2, 1.5]]
    const pairs = picks.map((held) => ({ moving: transformPoint(invertRigid(TRUTH), ...held).map((c) => c + 0.005 * gauss()), held }))
    const closed = fitRigid(pairs)
    expect(closed.ok).toBe(true)
    if (!closed.ok) return
    const result = await refineIcp(target, moving, { start: closed.matrix, maxDistance: 0.1 })
    expect(result.converged).toBe(true)
    expect(cornerError(result.matrix, TRUTH)).toBeLessThan(tolerance(moving))
    expect(cornerError(result.matrix, TRUTH)).toBeLessThan(cornerError(closed.matrix, TRUTH))
    expectNeverIncreasing(result.iterations)
  })

  it('never raises the RMS from harder starts either (Besl and McKay 1992)', async () => {
    const starts = [
      composeTransform({ translation: [0.1, 0.08, -0.05], rotationDegrees: { x: -2, y: 3, z: 6 } }),
      composeTransform({ translation: [-0.12, 0, 0.1], rotationDegrees: { x: 4, y: 0, z: -8 } }),
    ]
    for (const start of starts) {
      const result = await refineIcp(target, moving, { start, maxDistance: 0.4, sampleCap: 8000 })
      expectNeverIncreasing(result.iterations)
      expect(result.iterations.at(-1)!.rms).toBeLessThan(result.iterations[0]!.rms)
    }
  })

  it('rejects partners beyond the distance limit: 20 % of the points moved 50 m away give overlap 0.8 (Rusinkiewicz and Levoy 2001)', async () => {
    const strays = Float64Array.from(moving)
    let moved = 0
    for (let i = 0; i < MOVING_POINTS; i += 5, moved++) strays[3 * i] = strays[3 * i]! + 50
    const result = await refineIcp(target, strays, { maxDistance: 0.2 })
    expect(moved / MOVING_POINTS).toBe(0.2)
    expect(result.overlap).toBeCloseTo(0.8, 3)
    expect(result.iterations.at(-1)!.pairs).toBe(MOVING_POINTS - moved)
    expect(result.converged).toBe(true)
    expect(cornerError(result.matrix, TRUTH)).toBeLessThan(tolerance(moving))
    expectNeverIncreasing(result.iterations)
  })

  it('agrees with brute-force pairing at its final matrix: RMS, point RMS, overlap and pairs', async () => {
    const smallTarget = buildIcpTarget(roomCorner(6000, 3))
    const smallMoving = seenFrom(TRUTH, roomCorner(1500, 4))
    const limit = 0.2
    const result = await refineIcp(smallTarget, smallMoving, { maxDistance: limit, maxIterations: 3 })
    const t = smallTarget.points
    let pairs = 0, pointSq = 0, planeSq = 0, fitted = 0
    for (let i = 0; i < smallMoving.length; i += 3) {
      const q = transformPoint(result.matrix, smallMoving[i]!, smallMoving[i + 1]!, smallMoving[i + 2]!)
      let best = Infinity, at = -1
      for (let j = 0; j < smallTarget.count; j++) {
        const d2 = (t[3 * j]! - q[0]) ** 2 + (t[3 * j + 1]! - q[1]) ** 2 + (t[3 * j + 2]! - q[2]) ** 2
        if (d2 < best) [best, at] = [d2, j]
      }
      if (best > limit * limit) continue
      pairs++
      pointSq += best
      const n = smallTarget.normalAt(at)
      if (!n) continue
      fitted++
      planeSq += ((q[0] - t[3 * at]!) * n[0] + (q[1] - t[3 * at + 1]!) * n[1] + (q[2] - t[3 * at + 2]!) * n[2]) ** 2
    }
    const last = result.iterations.at(-1)!
    expect(last.pairs).toBe(pairs)
    expect(last.fitted).toBe(fitted)
    expect(last.overlap).toBe(pairs / 1500)
    expect(last.pointRms).toBeCloseTo(Math.sqrt(pointSq / pairs), 12)
    expect(last.rms).toBeCloseTo(Math.sqrt(planeSq / fitted), 12)
  })
})

describe('ICP as a server job: cap, subsample, abort, yielding', () => {
  it('respects the iteration cap (iterations[0] is the start)', async () => {
    const capped = await refineIcp(target, moving, { maxDistance: 0.2, maxIterations: 2 })
    expect(capped.iterations).toHaveLength(3)
    expect(capped.converged).toBe(false)
    expect(capped.reason).toMatch(/iteration cap \(2\)/)
    const none = await refineIcp(target, moving, { maxDistance: 0.2, maxIterations: 0 })
    expect(none.iterations).toHaveLength(1)
    expect(none.matrix).toEqual([...IDENTITY])
  })

  it('subsamples the moving scan to the cap, the same way every time', async () => {
    const a = await refineIcp(target, moving, { maxDistance: 0.2, sampleCap: 5000 })
    const b = await refineIcp(target, moving, { maxDistance: 0.2, sampleCap: 5000 })
    expect(a.sampleCount).toBe(5000)
    expect(a.iterations[0]!.pairs).toBeLessThanOrEqual(5000)
    expect(b.matrix).toEqual(a.matrix)
    expect(b.iterations).toEqual(a.iterations)
    const other = await refineIcp(target, moving, { maxDistance: 0.2, sampleCap: 5000, seed: 2 })
    expect(other.iterations[0]!.rms).not.toBe(a.iterations[0]!.rms)
    expect(cornerError(a.matrix, TRUTH)).toBeLessThan(tolerance(moving.subarray(0, 5000 * 3)))
  })

  it('stops with the signal: an abort mid-run rejects and no further progress arrives', async () => {
    const controller = new AbortController()
    const seen: number[] = []
    const run = refineIcp(target, moving, {
      maxDistance: 0.2,
      signal: controller.signal,
      onProgress: (p) => {
        seen.push(p.iteration)
        if (p.iteration === 1) controller.abort()
      },
    })
    await expect(run).rejects.toMatchObject({ name: 'AbortError' })
    expect(seen).toEqual([0, 1])
    const early = new AbortController()
    early.abort()
    await expect(refineIcp(target, moving, { signal: early.signal })).rejects.toMatchObject({ name: 'AbortError' })
  })

  it('yields to the event loop while it runs', async () => {
    let ticks = 0
    let running = true
    const tick = () => {
      ticks++
      if (running) setImmediate(tick)
    }
    setImmediate(tick)
    const result = await refineIcp(target, moving, { maxDistance: 0.2, maxIterations: 1 })
    running = false
    // Every pass yields at least once (more by the clock), and a run with one step makes two passes or more.
    expect(ticks).toBeGreaterThanOrEqual(2)
    expect(result.iterations).toHaveLength(2)
  })

  it('says so when nothing overlaps, and refuses a start that is not rigid', async () => {
    const far = seenFrom(composeTransform({ translation: [100, 0, 0], rotationDegrees: { x: 0, y: 0, z: 0 } }), surface)
    const lost = await refineIcp(target, far, { maxDistance: 0.2 })
    expect(lost.converged).toBe(false)
    expect(lost.iterations).toEqual([{ rms: 0, pointRms: 0, overlap: 0, pairs: 0, fitted: 0 }])
    expect(lost.reason).toMatch(/only 0 moving points/)
    await expect(refineIcp(target, moving, { start: [2, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1] })).rejects.toThrow(/start matrix column 0/)
    expect(() => buildIcpTarget(new Float64Array(4))).toThrow(RangeError)
  })
})
