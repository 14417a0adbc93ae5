import { describe, expect, it } from 'vitest'
import { freeOpening } from '@shared/measure/opening'
import { polygonArea } from '@shared/measure/polygon'
import { archway, doorway } from './openings'

const cm = 0.01, mm = 0.001
// Tolerances (derived): the opening's own stated resolution (one cell plus the scallop between points,
// opening.ts header) plus the points' noise at each of the two edges.
const noise = mm

describe('free opening', () => {
  it('finds the clear width and height of a 1.40 x 2.10 m doorway within the stated resolution (derived)', () => {
    const uv = doorway(1.4, 2.1, cm, noise)
    const o = freeOpening(uv, [0.7, 1.0], cm)
    expect(o.ok).toBe(true)
    if (!o.ok) return
    const tol = o.resolution + 2 * noise
    expect(o.correction).toBeCloseTo(2 * cm, 12)
    expect(Math.abs(o.clearWidthCorrected - 1.4)).toBeLessThanOrEqual(tol)
    expect(Math.abs(o.clearHeightCorrected - 2.1)).toBeLessThanOrEqual(tol)
    // Uncorrected values are biased small by 2r.
    expect(o.clearWidth).toBeLessThan(1.4 - cm)
    // Hull width of the region: the narrower side, also shrunk by 2r.
    expect(Math.abs(o.hullWidth + o.correction - 1.4)).toBeLessThanOrEqual(tol)
    // Area of the shrunk rectangle (1.4 - 2r)(2.1 - 2r), and the outline encloses about the same (derived).
    const shrunk = (1.4 - 2 * cm) * (2.1 - 2 * cm)
    expect(Math.abs(o.area - shrunk)).toBeLessThanOrEqual(tol * 2 * (1.4 + 2.1))
    expect(Math.abs(polygonArea(o.outline) - o.area)).toBeLessThanOrEqual(o.grid.cell * 2 * (1.4 + 2.1))
    expect(o.extents.uMin).toBeGreaterThan(0)
    expect(o.extents.uMax).toBeLessThan(1.4)
  })

  it('a semicircular head of radius 0.6 springing at 1.5 m gives a centre height of 2.1 m (derived: 1.5 + 0.6)', () => {
    const R = 0.6, s = 1.5, r = cm
    const o = freeOpening(archway(R, s, cm, noise), [0, 1], cm)
    expect(o.ok).toBe(true)
    if (!o.ok) return
    const tol = o.resolution + 2 * noise
    expect(Math.abs(o.centreHeightCorrected - (s + R))).toBeLessThanOrEqual(tol)
    // Clear width: the narrowest row of the middle half is its top one, a quarter of the shrunk height
    // (s + R - 2r) below the shrunk crown, where the shrunk head is 2 sqrt((R - r)^2 - (v - s)^2) wide (derived).
    const vTop = r + 0.75 * (s + R - 2 * r)
    const atTop = 2 * Math.sqrt((R - r) ** 2 - (vTop - s) ** 2) + 2 * r
    expect(Math.abs(o.clearWidthCorrected - atTop)).toBeLessThanOrEqual(tol + 2 * o.grid.cell)
    expect(o.clearWidthCorrected).toBeLessThan(2 * R)
      // Middle-half columns: the lowest is at a quarter of the shrunk width, x = (R - r) / 2, where the shrunk
      // head is at s + sqrt((R - r)^2 - x^2) = s + (R - r) sqrt(3) / 2; the floor side is at r (derived).
    const expected = s + ((R - r) * Math.sqrt(3)) / 2 - r + 2 * r
    // the slope of the arc there, 1/sqrt(3), turns one cell of column placement into 0.6 cell (derived)
    expect(Math.abs(o.clearHeightCorrected - expected)).toBeLessThanOrEqual(tol + o.grid.cell)
  })

  it('reports not-enclosed for a seed outside the opening and for a doorway without a floor', () => {
    const uv = doorway(1.4, 2.1, cm, noise)
    expect(freeOpening(uv, [-0.1, 1], cm)).toEqual({ ok: false, reason: 'not-enclosed' })
    expect(freeOpening(uv, [5, 5], cm)).toEqual({ ok: false, reason: 'not-enclosed' })
    expect(freeOpening(doorway(1.4, 2.1, cm, noise, 1, false), [0.7, 1], cm)).toEqual({ ok: false, reason: 'not-enclosed' })
  })

  it('reports seed-on-points, bad spacing and too few points', () => {
    const uv = doorway(1.4, 2.1, cm, noise)
    expect(freeOpening(uv, [0, 1], cm)).toEqual({ ok: false, reason: 'seed-on-points' })
    expect(freeOpening(uv, [0.7, 1], 0)).toEqual({ ok: false, reason: 'invalid-spacing' })
    expect(freeOpening(uv, [0.7, NaN], cm)).toEqual({ ok: false, reason: 'not-finite' })
    expect(freeOpening(new Float64Array(4), [0, 0], cm)).toEqual({ ok: false, reason: 'too-few-points' })
  })
})
