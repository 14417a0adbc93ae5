import { describe, expect, it } from 'vitest'
import { Vector3 } from 'three'
import { measureAngle } from '@shared/measure/angle'
import { mulberry32, normal, sampleStd, stdTolerance } from './random'

const mm = 1e-3

describe('three-point angle', () => {
  it('gives 90 degrees and u = 2.000 mrad = 0.1146 degrees for arms of 1 m at 1 mm per point (derived from JCGM 100:2008 eq. 10)', () => {
    const r = measureAngle([1, 0, 0], [0, 0, 0], [0, 1, 0], mm, mm, mm)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    expect(r.degrees).toBeCloseTo(90, 12)
    expect(r.u.radians * 1000).toBeCloseTo(2.0, 3)
    expect(r.u.degrees).toBeCloseTo(0.1146, 4)
    expect(r.b).toBeCloseTo(Math.SQRT2, 15)
    expect(r.nearBound).toBe(false)
  })

  it("agrees with three's Vector3.angleTo away from 0 and 180 degrees (reference library: three)", () => {
    const rand = mulberry32(5)
    for (let i = 0; i < 200; i++) {
      const p = () => [rand() * 10 - 5, rand() * 10 - 5, rand() * 10 - 5]
      const a = p(), b = p(), c = p()
      const r = measureAngle(a, b, c, 0, 0, 0)
      const vb = new Vector3(b[0], b[1], b[2])
      const u = new Vector3(a[0], a[1], a[2]).sub(vb), v = new Vector3(c[0], c[1], c[2]).sub(vb)
      expect(r.ok).toBe(true)
      if (!r.ok) return
      expect(r.radians).toBeCloseTo(u.angleTo(v), 9)
    }
  })

  it('stays exact near 0 and 180 degrees where acos of the dot product loses it (common practice)', () => {
    const tiny = 1e-9
    const small = measureAngle([1, 0, 0], [0, 0, 0], [1, tiny, 0], 0, 0, 0)
    expect(small.ok).toBe(true)
    if (!small.ok) return
    expect(small.radians / Math.atan(tiny)).toBeCloseTo(1, 9)
    // The naive form rounds the cosine to 1 and reports 0.
    const naive = Math.acos(Math.min(1, 1 / Math.hypot(1, tiny)))
    expect(naive).toBe(0)
    const tinyStraight = 1e-8
    const straight = measureAngle([-1, 0, 0], [0, 0, 0], [1, tinyStraight, 0], 0, 0, 0)
    expect(straight.ok && (Math.PI - straight.radians) / Math.atan(tinyStraight)).toBeCloseTo(1, 6)
  })

  it('matches the spread of simulated angles for an oblique, unequal case (seeded Monte Carlo)', () => {
    const gauss = normal(mulberry32(99))
    const a = [2, 0.3, 0.1], b = [0, 0, 0], c = [0.4, 1.5, -0.2]
    const sA = 1 * mm, sB = 2 * mm, sC = 1.5 * mm
    const r = measureAngle(a, b, c, sA, sB, sC)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    const n = 40_000
    const t = new Float64Array(n)
    const jitter = (p: number[], s: number) => p.map((x) => x + s * gauss())
    for (let i = 0; i < n; i++) {
      const s = measureAngle(jitter(a, sA), jitter(b, sB), jitter(c, sC), 0, 0, 0)
      if (!s.ok) throw new Error('sample degenerate')
      t[i] = s.radians
    }
    expect(Math.abs(sampleStd(t) - r.u.radians)).toBeLessThan(stdTolerance(r.u.radians, n))
  })

  it('refuses a zero arm and flags a straight angle whose spread reaches 180 degrees', () => {
    expect(measureAngle([0, 0, 0], [0, 0, 0], [1, 0, 0], mm, mm, mm)).toEqual({ ok: false, reason: 'coincident' })
    expect(measureAngle([1, 0, 0], [0, 0, 0], [0, 0, 0], mm, mm, mm)).toEqual({ ok: false, reason: 'coincident' })
    const straight = measureAngle([-1, 0, 0], [0, 0, 0], [1, 0, 0], mm, mm, mm)
    expect(straight.ok && straight.degrees).toBe(180)
    expect(straight.ok && straight.nearBound).toBe(true)
    const folded = measureAngle([1, 0, 0], [0, 0, 0], [2, 0, 0], mm, mm, mm)
    expect(folded.ok && folded.degrees).toBe(0)
    expect(measureAngle([1, 0, 0], [0, 0, 0], [0, 1, 0], mm, Number.NaN, mm)).toMatchObject({ ok: false })
  })
})
