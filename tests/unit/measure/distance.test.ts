import { describe, expect, it } from 'vitest'
import { Vector3 } from 'three'
import { measureDistance } from '@shared/measure/distance'
import { mulberry32, normal, sampleStd, stdTolerance } from './random'

const mm = 1e-3

describe('distance between two anchors', () => {
  it('gives d = 5 m and u(d) = sqrt(2) mm for (0,0,0)-(3,4,0) at 1 mm per coordinate per point (derived from JCGM 100:2008 eq. 10)', () => {
    const r = measureDistance([0, 0, 0], [3, 4, 0], 1 * mm, 1 * mm)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    expect(r.distance).toBe(5)
    expect(r.u.distance / mm).toBeCloseTo(Math.SQRT2, 12)
    expect([r.dx, r.dy, r.dz, r.horizontal, r.vertical]).toEqual([3, 4, 0, 5, 0])
    expect(r.u.horizontal! / mm).toBeCloseTo(Math.SQRT2, 12)
    expect(r.u.vertical / mm).toBeCloseTo(Math.SQRT2, 12)
  })

  it("agrees with three's Vector3.distanceTo on random pairs (reference library: three)", () => {
    const rand = mulberry32(11)
    for (let i = 0; i < 200; i++) {
      const a = [rand() * 200 - 100, rand() * 200 - 100, rand() * 20]
      const b = [rand() * 200 - 100, rand() * 200 - 100, rand() * 20]
      const r = measureDistance(a, b, 0, 0)
      const va = new Vector3(a[0], a[1], a[2]), vb = new Vector3(b[0], b[1], b[2])
      expect(r.ok).toBe(true)
      if (!r.ok) return
      expect(r.distance).toBeCloseTo(va.distanceTo(vb), 10)
      const flat = new Vector3(vb.x, vb.y, 0).distanceTo(new Vector3(va.x, va.y, 0))
      expect(r.horizontal).toBeCloseTo(flat, 10)
      expect(r.vertical).toBeCloseTo(vb.z - va.z, 12)
    }
  })

  it('matches the spread of simulated distances (seeded Monte Carlo, JCGM 101 idea; tolerance from N)', () => {
    const gauss = normal(mulberry32(42))
    const a = [1, 2, 0.5], b = [4.2, -1.3, 2.9], uA = 2 * mm, uB = 3 * mm
    const r = measureDistance(a, b, uA, uB)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    const n = 40_000
    const d = new Float64Array(n), h = new Float64Array(n), v = new Float64Array(n)
    for (let i = 0; i < n; i++) {
      const pa = a.map((c) => c + uA * gauss()), pb = b.map((c) => c + uB * gauss())
      const s = measureDistance(pa, pb, 0, 0)
      if (!s.ok) throw new Error('sample degenerate')
      d[i] = s.distance
      h[i] = s.horizontal
      v[i] = s.vertical
    }
    expect(Math.abs(sampleStd(d) - r.u.distance)).toBeLessThan(stdTolerance(r.u.distance, n))
    expect(Math.abs(sampleStd(h) - r.u.horizontal!)).toBeLessThan(stdTolerance(r.u.horizontal!, n))
    expect(Math.abs(sampleStd(v) - r.u.vertical)).toBeLessThan(stdTolerance(r.u.vertical, n))
  })

  it('refuses coincident anchors and keeps a plumb distance without a horizontal uncertainty', () => {
    expect(measureDistance([1, 1, 1], [1, 1, 1], mm, mm)).toEqual({ ok: false, reason: 'zero-length' })
    const plumb = measureDistance([1, 1, 0], [1, 1, 2.5], mm, mm)
    expect(plumb.ok && plumb.distance).toBe(2.5)
    expect(plumb.ok && plumb.vertical).toBe(2.5)
    expect(plumb.ok && plumb.u.horizontal).toBeNull()
    expect(measureDistance([0, 0, 0], [Number.NaN, 0, 0], mm, mm)).toMatchObject({ ok: false, reason: 'not-finite' })
    expect(measureDistance([0, 0, 0], [1, 0, 0], -mm, mm)).toMatchObject({ ok: false, reason: 'invalid-uncertainty' })
  })
})
