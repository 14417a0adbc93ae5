import { describe, expect, it } from 'vitest'
import { fitThrough } from '@shared/measure/clearance'
import { freeOpening, type FreeOpening } from '@shared/measure/opening'
import { archway, box, disc, doorway } from './openings'

const cm = 0.01, mm = 0.001

function open(uv: Float64Array, seed: [number, number], spacing = cm): FreeOpening {
  const o = freeOpening(uv, seed, spacing)
  if (!o.ok) throw new Error(o.reason)
  return o
}

// Tolerances (derived): the fit's stated grid resolution (clearance.ts header) plus the points' noise.
describe('fit through an opening', () => {
  const door = open(doorway(1.4, 2.1, cm, mm), [0.7, 1])

  it('a 1.0 x 1.8 box passes 1.40 x 2.10 with margin min(0.20, 0.15) = 0.15 m when centred (derived)', () => {
    const f = fitThrough(door, box(1.0, 1.8, 3, 3), 0.05, 0.01)
    expect(f.ok).toBe(true)
    if (!f.ok) return
    const tol = f.resolution + mm
    expect(Math.abs(f.margin - 0.15)).toBeLessThanOrEqual(tol)
    expect(f.outcome).toBe('passes')
    expect(f.collides).toBe(false)
    // Centred: the centroid near (0.70, 1.05); upright (0 or 180 degrees, the same for a box).
    expect(Math.abs(f.translation[0] - 0.7)).toBeLessThanOrEqual(0.05 + tol)
    expect(Math.abs(f.translation[1] - 1.05)).toBeLessThanOrEqual(tol)
    expect(Math.min(f.rotationDegrees, 180 - f.rotationDegrees)).toBeLessThanOrEqual(1)
    // The nearest section point lies at about the margin from the critical silhouette point.
    expect(Math.abs(f.nearest.pointDistance - f.margin)).toBeLessThanOrEqual(tol)
    expect(f.placed.length).toBeGreaterThanOrEqual(8)
  })

  it('the same box does not pass a 0.9 m wide opening and collides (1.0 > 0.9, 1.8 > 0.9)', () => {
    const narrow = open(doorway(0.9, 2.1, cm, mm, 3), [0.45, 1])
    const f = fitThrough(narrow, box(1.0, 1.8, 0, 0), 0.05, 0.01)
    expect(f.ok).toBe(true)
    if (!f.ok) return
    expect(f.outcome).toBe('does-not-pass')
    expect(f.collides).toBe(true)
    expect(f.margin).toBeLessThan(-0.03)
  })

  it('is too close to call when the required margin lies within +-U of the margin (r = 0.15, U = 0.02, derived)', () => {
    const f = fitThrough(door, box(1.0, 1.8, 0, 0), 0.15, 0.02)
    expect(f.ok).toBe(true)
    if (!f.ok) return
    expect(f.outcome).toBe('too-close-to-call')
  })

  it('a 1.9 x 0.8 box passes a 1.0 x 2.1 opening only turned 90 degrees (margins 0.10, derived)', () => {
    const o = open(doorway(1.0, 2.1, cm, mm, 4), [0.5, 1])
    const f = fitThrough(o, box(1.9, 0.8, 0, 0), 0.02, 0.01)
    expect(f.ok).toBe(true)
    if (!f.ok) return
    expect(Math.abs(f.rotationDegrees - 90)).toBeLessThanOrEqual(1) // two fine steps
    expect(Math.abs(f.margin - 0.1)).toBeLessThanOrEqual(f.resolution + mm)
    expect(f.outcome).toBe('passes')
    const upright = fitThrough(o, box(1.9, 0.8, 0, 0), 0.02, 0.01, { rangeDegrees: 1, coarseStepDegrees: 1, fineStepDegrees: 1 })
    expect(upright.ok && upright.outcome).toBe('does-not-pass')
    // Held within 30 degrees of upright: a 1.9 x 0.8 box turned by t needs 1.9 cos t + 0.8 sin t of width,
    // at least 1.9 cos 30 + 0.8 sin 30 = 2.05 m > 1.0 m (derived): it cannot pass; the search stays in range.
    const held = fitThrough(o, box(1.9, 0.8, 0, 0), 0.02, 0.01, { maxTurnDegrees: 30 })
    expect(held.ok && held.outcome).toBe('does-not-pass')
    expect(held.ok && Math.abs(held.rotationDegrees)).toBeLessThanOrEqual(30)
    const still = fitThrough(o, box(1.9, 0.8, 0, 0), 0.02, 0.01, { maxTurnDegrees: 0 })
    expect(still.ok && still.rotationDegrees).toBe(0)
    expect(fitThrough(o, box(1.9, 0.8, 0, 0), 0.02, 0.01, { maxTurnDegrees: -1 })).toEqual({ ok: false, reason: 'invalid-options' })
  })

  it('rests the object on the floor or a trolley: the head margin is then the whole slack above it (derived)', () => {
    // Door 0.900 x 2.000, floor at v = 0 (the doorway's floor line). A box 0.60 x 1.90 (derived):
    // carried, centred: min((0.90 - 0.60) / 2, (2.00 - 1.90) / 2) = min(0.15, 0.05) = 0.05;
    // resting on the floor: min(0.15, 2.00 - 1.90) = 0.10; on a trolley 0.15 high: 2.00 - 0.15 - 1.90 = -0.05.
    // A wide band of grid round the points (0.3 m), so that the trolley's 0.05 m overlap is measured, not cut off.
    const o = freeOpening(doorway(0.9, 2.0, cm, mm, 12), [0.45, 1], cm, { margin: 0.3 })
    if (!o.ok) throw new Error(o.reason)
    const tall = box(0.6, 1.9, 0, 0)
    const tol = (f: { resolution: number }) => f.resolution + mm
    const carried = fitThrough(o, tall, 0, 0, { maxTurnDegrees: 0 })
    const resting = fitThrough(o, tall, 0, 0, { maxTurnDegrees: 0, restOn: 0 })
    const trolley = fitThrough(o, tall, 0, 0, { maxTurnDegrees: 0, restOn: 0.15 })
    if (!carried.ok || !resting.ok || !trolley.ok) throw new Error('not fitted')
    expect(Math.abs(carried.margin - 0.05)).toBeLessThanOrEqual(tol(carried))
    expect(Math.abs(resting.margin - 0.1)).toBeLessThanOrEqual(tol(resting))
    expect(Math.abs(trolley.margin - -0.05)).toBeLessThanOrEqual(tol(trolley))
    // Resting, its lowest point is on the floor: the placed silhouette's lowest v is about 0.
    const lowest = Math.min(...Array.from(resting.placed).filter((_, i) => i % 2 === 1))
    expect(Math.abs(lowest)).toBeLessThanOrEqual(o.grid.cell)
    // A low box resting: the sides limit it (0.15), not the floor under it.
    const low = fitThrough(o, box(0.6, 0.5, 0, 0), 0, 0, { maxTurnDegrees: 0, restOn: 0 })
    expect(low.ok && Math.abs(low.margin - 0.15)).toBeLessThanOrEqual(tol(resting))
    expect(fitThrough(o, tall, 0, 0, { restOn: 5 })).toEqual({ ok: false, reason: 'rest-level-outside' })
    expect(fitThrough(o, tall, 0, 0, { restOn: Number.NaN })).toEqual({ ok: false, reason: 'invalid-options' })
  })

  it('a disc of radius 0.65 passes an arch where its bounding square 1.3 x 1.3 does not', () => {
    // Arch of width 1.40 (head radius R = 0.70) springing at s = 0.80 (derived):
    // disc centred on the springing line: margins R - 0.65 = 0.05 to jambs and head, 0.80 - 0.65 = 0.15 to
    // the floor, so m = 0.05. Square: at u = +-0.65 the head is at s + sqrt(0.70^2 - 0.65^2) = 1.06 < 1.30,
    // and turning it only widens it (1.3 (cos a + sin a) > 1.40 beyond a few degrees): it cannot fit.
    const arch = open(archway(0.7, 0.8, cm, mm), [0, 0.5])
    const d = fitThrough(arch, disc(0.65, 0, 0), 0, 0.01)
    expect(d.ok).toBe(true)
    if (!d.ok) return
    expect(Math.abs(d.margin - 0.05)).toBeLessThanOrEqual(d.resolution + mm)
    expect(d.outcome).toBe('passes')
    const sq = fitThrough(arch, box(1.3, 1.3, 0, 0), 0, 0.01)
    expect(sq.ok && sq.outcome).toBe('does-not-pass')
  })

  it('rejects an empty or degenerate silhouette and bad inputs', () => {
    expect(fitThrough(door, new Float64Array(0), 0, 0)).toEqual({ ok: false, reason: 'empty-silhouette' })
    expect(fitThrough(door, Float64Array.from([0, 0, 1, 1, 2, 2]), 0, 0)).toEqual({ ok: false, reason: 'degenerate-silhouette' })
    expect(fitThrough(door, box(1, 1, 0, 0), NaN, 0)).toEqual({ ok: false, reason: 'invalid-margin' })
    expect(fitThrough(door, box(1, 1, 0, 0), 0, -1)).toEqual({ ok: false, reason: 'invalid-uncertainty' })
  })

  it('1.4 x 2.1 m at 1 cm cells, a 200-point silhouette over about 60 rotations, in well under a second', () => {
    const coarse = open(doorway(1.4, 2.1, 2 * cm, mm, 5), [0.7, 1], 2 * cm)
    expect(coarse.grid.cell).toBeCloseTo(0.01, 12)
    const t0 = performance.now()
    const f = fitThrough(coarse, box(1.0, 1.8, 0, 0, 200), 0.05, 0.01)
    const ms = performance.now() - t0
    expect(f.ok && f.rotationsTried).toBeGreaterThanOrEqual(50)
    console.log(`fit: ${ms.toFixed(1)} ms`)
    expect(ms).toBeLessThan(1000)
  })
})
