// Sphere target centres from the points of a cap (shared/geometry/sphereFit.ts). References: the sphere the
// test draws the points from (seeded noise along the radius), an independent linear least-squares route
// through ml-matrix's solver (the algebraic form of Kasa 1976, from memory), and the orthogonal-distance
// criterion of Shakarji 1998 (J. Res. NIST 103(6)) that the fit minimises.
import { describe, expect, it } from 'vitest'
import { Matrix, solve } from 'ml-matrix'
import { fitSphereKnownRadius } from '@shared/geometry/sphereFit'
import { mulberry32, normal } from './measure/random'

/** Points on the cap of a sphere seen from direction `towards` (half-angle `capDeg`), noise along the radius. */
function cap(centre: number[], radius: number, towards: number[], capDeg: number, n: number, noise: number, seed: number): number[] {
  const rand = mulberry32(seed)
  const gauss = normal(rand)
  const len = Math.hypot(...towards)
  const w = towards.map((v) => v / len)
  const a = Math.abs(w[0]!) < 0.9 ? [1, 0, 0] : [0, 1, 0]
  const u = [w[1]! * a[2]! - w[2]! * a[1]!, w[2]! * a[0]! - w[0]! * a[2]!, w[0]! * a[1]! - w[1]! * a[0]!]
  const ul = Math.hypot(...u)
  const uu = u.map((v) => v / ul)
  const v = [w[1]! * uu[2]! - w[2]! * uu[1]!, w[2]! * uu[0]! - w[0]! * uu[2]!, w[0]! * uu[1]! - w[1]! * uu[0]!]
  const out: number[] = []
  const cosMax = Math.cos((capDeg * Math.PI) / 180)
  for (let i = 0; i < n; i++) {
    const z = 1 - rand() * (1 - cosMax)
    const phi = 2 * Math.PI * rand()
    const r = Math.sqrt(1 - z * z)
    const d = [0, 1, 2].map((k) => z * w[k]! + r * Math.cos(phi) * uu[k]! + r * Math.sin(phi) * v[k]!)
    const rr = radius + noise * gauss()
    out.push(...d.map((dk, k) => centre[k]! + rr * dk))
  }
  return out
}

describe('sphere target centre, radius held', () => {
  it('finds the centre of a noiseless cap exactly, and the algebraic radius (derived)', () => {
    const pts = cap([2, -3, 1.2], 0.0725, [0, -1, 0.2], 70, 400, 0, 1)
    const fit = fitSphereKnownRadius(pts, 0.0725)
    if (!fit.ok) throw new Error(fit.message)
    fit.centre.forEach((c, i) => expect(c).toBeCloseTo([2, -3, 1.2][i]!, 9))
    expect(fit.freeRadius).toBeCloseTo(0.0725, 9)
    expect(fit.rms).toBeLessThan(1e-9)
    expect(fit.count).toBe(400)
  })

  it('agrees with an independent algebraic fit through ml-matrix and recovers the centre within the noise (Kasa 1976; Shakarji 1998)', () => {
    const centre = [0.4, 1.1, 2.0], radius = 0.1, noise = 0.001, n = 600
    const pts = cap(centre, radius, [1, 1, 0], 80, n, noise, 5)
    const fit = fitSphereKnownRadius(pts, radius)
    if (!fit.ok) throw new Error(fit.message)
    // Independent route: rows [2x, 2y, 2z, 1] c' = |p|^2, solved by ml-matrix (least squares via QR).
    const a = new Matrix(n, 4), b = new Matrix(n, 1)
    for (let i = 0; i < n; i++) {
      const [x, y, z] = [pts[3 * i]!, pts[3 * i + 1]!, pts[3 * i + 2]!]
      a.setRow(i, [2 * x, 2 * y, 2 * z, 1])
      b.set(i, 0, x * x + y * y + z * z)
    }
    const s = solve(a, b)
    const free = Math.sqrt(s.get(3, 0) + s.get(0, 0) ** 2 + s.get(1, 0) ** 2 + s.get(2, 0) ** 2)
    expect(fit.freeRadius).toBeCloseTo(free, 9)
    // Per axis about noise sqrt(3 / n) over a whole sphere (J^T J = n/3 I); an 80-degree cap is less
    // balanced: allow five times that, still far under a millimetre (derived).
    const err = Math.hypot(...fit.centre.map((c, i) => c - centre[i]!))
    expect(err).toBeLessThan(5 * noise * Math.sqrt(3 / n) * Math.sqrt(3))
    expect(fit.rms).toBeGreaterThan(0.8 * noise)
    expect(fit.rms).toBeLessThan(1.2 * noise)
  })

  it('drops points of a wall behind the target and keeps the centre (trimming)', () => {
    const centre = [0, 0, 1], radius = 0.0725
    const pts = cap(centre, radius, [0, -1, 0], 75, 500, 0.0005, 9)
    // A few points of a plane 2 cm behind the sphere's back (y = R + 0.02).
    for (let i = 0; i < 15; i++) pts.push(-0.03 + 0.004 * i, radius + 0.02, 1 - 0.03 + 0.004 * i)
    const fit = fitSphereKnownRadius(pts, radius)
    if (!fit.ok) throw new Error(fit.message)
    expect(fit.count).toBeLessThanOrEqual(500)
    expect(fit.rms).toBeLessThan(0.001)
    expect(Math.hypot(...fit.centre.map((c, i) => c - centre[i]!))).toBeLessThan(0.0005)
  })

  it('says why it finds no target: too few points, a flat patch, a sphere of another size', () => {
    expect(fitSphereKnownRadius([0, 0, 0, 1, 0, 0, 0, 1, 0], 0.1)).toMatchObject({ ok: false, reason: 'too-few-points' })
    const flat: number[] = []
    for (let i = 0; i < 10; i++) for (let j = 0; j < 10; j++) flat.push(i * 0.01, 0, j * 0.01)
    expect(fitSphereKnownRadius(flat, 0.0725)).toMatchObject({ ok: false, reason: 'not-a-sphere' })
    const big = cap([0, 0, 0], 0.1, [0, -1, 0], 70, 300, 0.0005, 3)
    const wrong = fitSphereKnownRadius(big, 0.0725)
    expect(wrong).toMatchObject({ ok: false, reason: 'not-a-sphere' })
    if (!wrong.ok) expect(wrong.message).toMatch(/radius 100 mm, not 72.5 mm/)
  })
})
