// The point-to-plane distance (shared/measure/pointToPlane.ts) against three.js's Plane
// (setFromCoplanarPoints, distanceToPoint: a general-purpose reference library) for three plane points, and
// against ml-matrix's singular value decomposition (the least-squares plane's normal is the right singular
// vector of the centred points with the smallest singular value: Shakarji 1998, J. Res. NIST 103(6)) for more.
// Its uncertainty is shown by simulation against known truth (JCGM 101:2008, Monte Carlo): U = 2 u covers the
// true distance in about 95 % of trials.
import { describe, expect, it } from 'vitest'
import { Matrix, SingularValueDecomposition } from 'ml-matrix'
import { Plane, Vector3 } from 'three'
import { measurePointToPlane } from '@shared/measure/pointToPlane'

/** Box-Muller normal deviates from a seeded generator (mulberry32), so the run is the same every time. */
function normals(seed: number) {
  let a = seed >>> 0
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
  return () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform())
}

describe('the point-to-plane distance', () => {
  it('agrees with three.js for a plane through three points', () => {
    const a: [number, number, number] = [0.2, 0.1, 1.01], b: [number, number, number] = [3.1, 0.4, 1.03], c: [number, number, number] = [1.4, 2.6, 0.98]
    const p: [number, number, number] = [1.7, 1.1, 1.262]
    const r = measurePointToPlane(p, [a, b, c], 0.001, [0.001, 0.001, 0.001])
    expect(r.ok).toBe(true)
    if (!r.ok) return
    const plane = new Plane().setFromCoplanarPoints(new Vector3(...a), new Vector3(...b), new Vector3(...c))
    expect(r.distance).toBeCloseTo(Math.abs(plane.distanceToPoint(new Vector3(...p))), 12)
    expect(r.planeRms).toBeCloseTo(0, 12)
  })

  it('agrees with a least-squares plane from ml-matrix SVD for six points on a wall out of plumb', () => {
    // A wall leaning 1 in 100 (x = 0.01 z), points with a few millimetres of unevenness.
    const wall: [number, number, number][] = [
      [0.002, 0.0, 0.2], [0.011, 1.5, 0.9], [0.019, 3.0, 2.1], [0.014, 0.7, 1.6], [0.004, 2.2, 0.4], [0.021, 2.9, 2.5],
    ]
    const p: [number, number, number] = [0.046, 1.4, 1.2]
    const r = measurePointToPlane(p, wall, 0.0015, wall.map(() => 0.0015))
    expect(r.ok).toBe(true)
    if (!r.ok) return
    const c = [0, 1, 2].map((k) => wall.reduce((s, q) => s + q[k]!, 0) / wall.length)
    const centred = new Matrix(wall.map((q) => q.map((v, k) => v - c[k]!)))
    const svd = new SingularValueDecomposition(centred)
    const v = svd.rightSingularVectors.getColumn(2)
    const d = (p[0] - c[0]!) * v[0]! + (p[1] - c[1]!) * v[1]! + (p[2] - c[2]!) * v[2]!
    expect(r.distance).toBeCloseTo(Math.abs(d), 10)
    expect(r.tiltFromPlumb).toBeGreaterThan(0.3)
    expect(r.tiltFromPlumb).toBeLessThan(0.9)
  })

  it('refuses plane points in a line, and fewer than three', () => {
    expect(measurePointToPlane([0, 0, 1], [[0, 0, 0], [1, 0, 0], [2, 0, 0]], 0.001, [0.001, 0.001, 0.001])).toEqual({ ok: false, reason: 'collinear' })
    expect(measurePointToPlane([0, 0, 1], [[0, 0, 0], [1, 0, 0]], 0.001, [0.001, 0.001])).toEqual({ ok: false, reason: 'too-few-points' })
  })

  it.each([3, 5])('holds its uncertainty with %i plane points: U = 2u covers the true distance in about 95 in 100 of 2000 trials', (m) => {
    // Truth: a floor falling 1 in 50 along x; P 12 mm above it. Each point picked with 2 mm per coordinate.
    const sigma = 0.002
    const floorZ = (x: number, y: number) => -0.02 * x + 0.004 * y
    const plane = [[0.3, 0.2], [2.6, 0.5], [1.2, 2.4], [2.2, 1.9], [0.6, 1.5]].slice(0, m).map(([x, y]) => [x!, y!, floorZ(x!, y!)] as [number, number, number])
    const P: [number, number, number] = [1.4, 1.0, floorZ(1.4, 1.0) + 0.012]
    const n = [0.02, -0.004, 1]
    const truth = (0.012 * 1) / Math.hypot(...n)
    const z = normals(20261205 + m)
    let covered = 0
    const trials = 2000
    for (let t = 0; t < trials; t++) {
      const jitter = (q: [number, number, number]): [number, number, number] => [q[0] + sigma * z(), q[1] + sigma * z(), q[2] + sigma * z()]
      const r = measurePointToPlane(jitter(P), plane.map(jitter), sigma, plane.map(() => sigma))
      if (r.ok && Math.abs(r.signed - truth) <= 2 * r.u) covered++
    }
    const rate = covered / trials
    // Binomial spread at 2000 trials is about 0.5 %; the first-order u is good to a few per cent here.
    expect(rate).toBeGreaterThan(0.93)
    expect(rate).toBeLessThan(0.975)
  })
})
