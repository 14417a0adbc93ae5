// Turning and tipping an object to pass a door: the hand-derived cases of a 0.900 x 2.000 m door, object
// carried (free in the opening). Each margin is derived by hand from the silhouette's width and height
// (margin = the smaller of the half-slacks across and up: (0.900 - width) / 2 and (2.000 - height) / 2), and
// the tipping angle from the projected height of a tipped box, h cos(a) + d sin(a) (plain trigonometry).
// Tolerances: the fit's stated grid resolution (clearance.ts) plus the support points' inner-hull bound
// (orientation.ts header: 2.4 mm at 1 m) plus the orientation search's fine step times the object's radius.
import { describe, expect, it } from 'vitest'
import { fitThrough } from '@shared/measure/clearance'
import { freeOpening, type FreeOpening } from '@shared/measure/opening'
import { boxBound, describeOrientation, orientation, passageAxes, searchOrientations, silhouetteOf, hullOf, supportPoints, type OrientationLimits } from '@shared/measure/orientation'
import { doorway } from './openings'

const cm = 0.01, mm = 0.001

function door(): FreeOpening {
  // A wide band of grid round the points (0.3 m), so that an overlap as deep as 0.1 m is measured, not cut off.
  const o = freeOpening(doorway(0.9, 2.0, cm, mm, 11), [0.45, 1], cm, { margin: 0.3 })
  if (!o.ok) throw new Error(o.reason)
  return o
}

/** Surface points of a box w (across, u) x d (along travel, w) x h (up, v), every `step` metres, passage frame. */
function boxPoints(w: number, d: number, h: number, step = 0.02): Float64Array {
  const out: number[] = []
  const range = (l: number) => Array.from({ length: Math.round(l / step) + 1 }, (_, i) => (i * l) / Math.round(l / step))
  for (const a of range(w)) for (const b of range(d)) out.push(a, 0, b, a, h, b)
  for (const a of range(w)) for (const c of range(h)) out.push(a, c, 0, a, c, d)
  for (const b of range(d)) for (const c of range(h)) out.push(0, c, b, w, c, b)
  return Float64Array.from(out)
}

const up = [0, 1, 0] as const
const opening = door()
const fit = (s: Float64Array) => {
  const f = fitThrough(opening, s, 0, 0, { maxTurnDegrees: 0 })
  if (!f.ok) throw new Error(f.reason)
  return f.margin
}
const resolution = (() => {
  const f = fitThrough(opening, Float64Array.from([0, 0, 0.1, 0, 0.1, 0.1, 0, 0.1]), 0, 0, { maxTurnDegrees: 0 })
  return f.ok ? f.resolution : NaN
})()
const e = opening.extents
const bound = boxBound(e.uMax - e.uMin + 2 * opening.radius + opening.grid.cell, e.vMax - e.vMin + 2 * opening.radius + opening.grid.cell, false, resolution)

function search(w: number, d: number, h: number, limits: OrientationLimits) {
  const support = supportPoints(boxPoints(w, d, h))!
  const r = searchOrientations(support.points, up, limits, fit, bound)
  if (!r.ok) throw new Error(r.reason)
  const radius = Math.hypot(w, d, h) / 2
  return { r, support, tol: resolution + 2.4 * mm * radius + 0.5 * (Math.PI / 180) * radius + mm }
}

describe('turning and tipping through a 0.900 x 2.000 m door, carried (derived by hand)', () => {
  it('a 0.6 x 0.4 x 1.2 m box: 0.150 as it stands, 0.250 turned 90 degrees about the vertical', () => {
    const { r, support, tol } = search(0.6, 0.4, 1.2, { mode: 'upright' })
    expect(Math.abs(r.asItStands - 0.15)).toBeLessThanOrEqual(tol)
    expect(Math.abs(r.margin - 0.25)).toBeLessThanOrEqual(tol)
    expect(r.words).toMatch(/^turned 90 degrees, a side leading$/)
    // The reported orientation, evaluated again, gives the reported margin.
    expect(fit(hullOf(silhouetteOf(support.points, r.best.matrix)))).toBeCloseTo(r.margin, 9)
    // As it stands only: the margin as it stands.
    expect(search(0.6, 0.4, 1.2, { mode: 'as-it-stands' }).r.margin).toBeCloseTo(r.asItStands, 9)
  })

  it('a 1.0 x 0.4 x 1.2 m box does not pass as it stands (-0.050) and passes turned (0.250)', () => {
    const { r, tol } = search(1.0, 0.4, 1.2, { mode: 'upright' })
    expect(Math.abs(r.asItStands - -0.05)).toBeLessThanOrEqual(tol)
    expect(Math.abs(r.margin - 0.25)).toBeLessThanOrEqual(tol)
  })

  it('a 0.5 x 1.0 x 2.2 m cabinet: -0.100 upright (even turned), passes tipped from about 59 degrees, 0.200 lying on its back', () => {
    const upright = search(0.5, 1.0, 2.2, { mode: 'upright' })
    expect(Math.abs(upright.r.margin - -0.1)).toBeLessThanOrEqual(upright.tol)
    // Tipped at most 55 degrees: 2.2 cos 55 + 1.0 sin 55 = 2.081 m > 2.000, so it still does not pass.
    const short = search(0.5, 1.0, 2.2, { mode: 'tipped', maxTipDegrees: 55 })
    expect(short.r.margin).toBeLessThan(0)
    // Tipped at most 65 degrees: 2.2 cos 65 + 1.0 sin 65 = 1.836 m: passes, by (2.000 - 1.836) / 2 = 0.082 at most.
    const some = search(0.5, 1.0, 2.2, { mode: 'tipped', maxTipDegrees: 65 })
    expect(some.r.margin).toBeGreaterThan(0)
    expect(some.r.margin).toBeLessThanOrEqual(0.082 + some.tol)
    // Any orientation: 0.200, limited by the width (0.900 - 0.500) / 2; tipped anywhere from about 70 to 110
    // degrees ties, and the plainest of those is reported: lying flat.
    const any = search(0.5, 1.0, 2.2, { mode: 'any' })
    expect(Math.abs(any.r.margin - 0.2)).toBeLessThanOrEqual(any.tol)
    expect(any.r.words).toMatch(/^tipped onto its (back|front), (top|bottom) leading$/)
    expect(fit(hullOf(silhouetteOf(any.support.points, any.r.best.matrix)))).toBeCloseTo(any.r.margin, 9)
  })
})

describe('a rigger’s words', () => {
  const axes = passageAxes(up)!
  it('names the turn and the faces', () => {
    expect(describeOrientation(orientation(axes, 0, 0, 0).matrix, axes)).toBe('as it stands')
    expect(describeOrientation(orientation(axes, 90, 0, 0).matrix, axes)).toBe('turned 90 degrees, a side leading')
    expect(describeOrientation(orientation(axes, 180, 0, 0).matrix, axes)).toBe('turned round, back leading')
    // Tipped about the axis across the travel, top towards the travel: the front goes down, the top leads.
    expect(describeOrientation(orientation(axes, 0, 90, 0).matrix, axes)).toMatch(/^tipped onto its (front|back), top leading$/)
    expect(describeOrientation(orientation(axes, 180, 90, 0).matrix, axes)).toMatch(/^tipped onto its (front|back), bottom leading$/)
    expect(describeOrientation(orientation(axes, 0, 180, 0).matrix, axes)).toMatch(/^upside down/)
    expect(describeOrientation(orientation(axes, 0, 90, 90).matrix, axes)).toMatch(/^laid on a side/)
  })
})
