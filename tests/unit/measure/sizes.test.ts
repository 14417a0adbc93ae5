// The sizes of an object (shared/measure/sizes.ts) from synthetic captures as a practitioner makes them: the
// object standing on a floor, scanned from four stations around it by the project's own ray caster
// (server/demo/synth/raycast.ts, tests/utils/stationScans.ts), range noise along each beam, each station
// aligned with a registration error of the stated per-axis u, the points trimmed by a keep box and a floor cut.
// Truths are the solids' own dimensions (derived). Coverage of U by simulation in the manner of GUM Supplement 1
// (JCGM 101:2008): over seeded trials the fraction with |value - truth| <= U should be near 95 % for k = 2
// (JCGM 100:2008 section 6.2, Annex G); 50 trials at 90 % leave room for the binomial spread (sd about 3 %).
// The extreme points lie about three noise sigmas beyond each face (expected maximum of n normal deviates,
// order statistics), so a box read at its extreme points is too large by about six sigmas a size.
import { describe, expect, test } from 'vitest'
import { boxFaces, type Surface } from '../../../server/demo/synth/raycast'
import { measureSizes, type ObjectSizes, type SizeOptions } from '@shared/measure/sizes'
import { castStations, stationsAround, trialScan, type StationBeams, type TrialScan } from '../../utils/stationScans'

const look = { reflectance: 0.5, color: [150, 140, 130] as [number, number, number] }
const FLOOR: Surface = { kind: 'rect', axis: 2, at: 0, min: [-6, -6], max: [6, 6], ...look }
const BOX = { length: 0.6, width: 0.4, height: 1.2 }
/** Stations 2 m from the object's centre, 1.8 m up, on four sides. */
const AROUND = [0, 90, 180, 270]
const REG_U = 0.001

const boxSurfaces = () => [FLOOR, ...boxFaces([-BOX.length / 2, -BOX.width / 2, 0], [BOX.length / 2, BOX.width / 2, BOX.height], look, ['-z'])]

/** The beams of stations fixed in the scene on a box turned by `deg` about its vertical axis (cast in the box's frame, turned back). */
function turnedBeams(stepDeg: number, deg: number): StationBeams[] {
  const a = (deg * Math.PI) / 180, c = Math.cos(a), s = Math.sin(a)
  // The stations seen from the box's frame stand at headings turned by -deg.
  const beams = castStations(stationsAround(0, 0, 2.0, 1.8, AROUND.map((h) => h - deg), 0.45, stepDeg), boxSurfaces())
  const turn = (x: number, y: number) => [c * x - s * y, s * x + c * y] as const
  return beams.map((b) => {
    const [ox, oy] = turn(b.origin[0], b.origin[1])
    const dirs = Float64Array.from(b.dirs)
    for (let i = 0; i < dirs.length; i += 3) {
      const [x, y] = turn(dirs[i]!, dirs[i + 1]!)
      dirs[i] = x
      dirs[i + 1] = y
    }
    return { origin: [ox, oy, b.origin[2]], dirs, ranges: b.ranges }
  })
}

function options(scan: TrialScan, sigma: number, withAroundCounts = true): SizeOptions {
  return {
    sigma,
    spacing: 0.01,
    members: scan.counts.map((count, i) => ({ name: `station ${'ABCD'[i]}`, registrationU: REG_U, count })),
    ...(withAroundCounts ? { aroundCounts: scan.aroundCounts } : {}),
  }
}

function sizesOf(beams: StationBeams[], sigma: number, seed: number, turnDeg = 0, withAroundCounts = true): ObjectSizes {
  // A person's trims: a keep box 5 cm round the object, and a floor cut four noise sigmas up (at least 1 cm).
  const trim = { centre: [0, 0] as [number, number], half: [BOX.length / 2 + 0.05, BOX.width / 2 + 0.05] as [number, number], turnDeg, cutBelow: Math.max(0.01, 4 * sigma) }
  const scan = trialScan(beams, trim, sigma, REG_U, seed)
  const r = measureSizes(scan.points, scan.around, options(scan, sigma, withAroundCounts))
  if (!r.ok) throw new Error(`${r.reason}: ${r.detail}`)
  return r
}

const within = (r: ObjectSizes, truth: { length: number; width: number; height: number }) =>
  (['length', 'width', 'height'] as const).map((k) => ({ k, error: r[k].value - truth[k], U: r[k].U }))

describe('the sizes of a box 0.60 x 0.40 x 1.20 m on a floor, four aligned stations', () => {
  const beams = castStations(stationsAround(0, 0, 2.0, 1.8, AROUND, 0.45, 0.5), boxSurfaces())

  for (const sigma of [0.002, 0.01]) {
    test(`${sigma * 1000} mm range noise: each size within its U of the truth, the floor found under it`, () => {
      const r = sizesOf(beams, sigma, 101)
      for (const { k, error, U } of within(r, BOX)) expect(Math.abs(error), `${k}: error ${(error * 1000).toFixed(2)} mm, U ${(U * 1000).toFixed(2)} mm`).toBeLessThanOrEqual(U)
      expect(r.floor.found).toBe(true)
      expect(r.floor.plane!.normal[2]).toBeGreaterThan(0.999)
      expect(r.box.axes[2]).toEqual([0, 0, 1])
      // The length runs along x (either way), the width along y.
      expect(Math.abs(r.box.axes[0][0])).toBeCloseTo(1, 3)
      // Each end is seen by one station: the length carries those two stations' registrations, not the others'.
      expect(r.length.parts.map((p) => p.name).sort()).toEqual(['face fits', 'registration (station A)', 'registration (station C)'])
      expect(r.notes).toEqual([])
    })
  }

  test('the extreme points would give a box too large by about six sigmas a size: outside U (the bias the fit removes)', () => {
    const sigma = 0.01
    const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.25], turnDeg: 0, cutBelow: 0.04 }, sigma, REG_U, 101)
    let lo = Infinity, hi = -Infinity
    for (let i = 0; i < scan.points.length; i += 3) if (scan.points[i + 2]! > 0.1 && scan.points[i + 2]! < 1.1) (lo = Math.min(lo, scan.points[i]!)), (hi = Math.max(hi, scan.points[i]!))
    const r = measureSizes(scan.points, scan.around, options(scan, sigma))
    if (!r.ok) throw new Error(r.detail)
    expect(hi - lo - BOX.length).toBeGreaterThan(4 * sigma)
    expect(hi - lo - BOX.length).toBeGreaterThan(r.length.U)
  })

  test('without the floor counts by station, the floor carries the largest registration, and the height still covers', () => {
    const r = sizesOf(beams, 0.01, 102, 0, false)
    expect(r.height.parts.map((p) => p.name)).toContain('registration (floor, any member)')
    expect(Math.abs(r.height.value - BOX.height)).toBeLessThanOrEqual(r.height.U)
  })

  test('a large object is fitted on every k-th point: the sizes move by no more than their fits allow, the fits\' u larger by about sqrt(k)', () => {
    const sigma = 0.002
    const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.25], turnDeg: 0, cutBelow: 0.01 }, sigma, REG_U, 104)
    const all = measureSizes(scan.points, scan.around, options(scan, sigma))
    // A cap of a quarter of the points: every 4th point is fitted (s / sqrt(m), JCGM 100 4.2.3: twice the u).
    const thinned = measureSizes(scan.points, scan.around, { ...options(scan, sigma), fitPoints: Math.ceil(scan.points.length / 3 / 4) })
    if (!all.ok || !thinned.ok) throw new Error('not measured')
    // The same registration draw in both: the thinned sizes stay within the extra spread of their fits.
    for (const k of ['length', 'width', 'height'] as const) expect(Math.abs(thinned[k].value - all[k].value), k).toBeLessThanOrEqual(3 * thinned[k].parts[0]!.u + 1e-4)
    const fits = (r: ObjectSizes) => r.length.parts.find((p) => p.name === 'face fits')!.u
    expect(fits(thinned) / fits(all)).toBeGreaterThan(1.5)
    expect(fits(thinned) / fits(all)).toBeLessThan(2.7)
  })

  test('without a floor (nothing trimmed away under it) the height is from the lowest kept point, and says so', () => {
    const sigma = 0.002
    const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.25], turnDeg: 0, cutBelow: 0.01 }, sigma, REG_U, 103)
    const r = measureSizes(scan.points, new Float64Array(0), options(scan, sigma, false))
    if (!r.ok) throw new Error(r.detail)
    expect(r.floor).toEqual({ found: false, plane: null })
    expect(r.notes.join(' ')).toMatch(/lowest kept point/)
    // The floor cut at 1 cm took that much off the bottom: the height is short by about that, and says why.
    expect(r.height.value).toBeGreaterThan(BOX.height - 0.012)
    expect(r.height.value).toBeLessThan(BOX.height - 0.006)
  })
})

describe('a turned box and coverage', () => {
  test('a box turned 30 degrees: its axes at 30 degrees and its sizes within U', () => {
    const r = sizesOf(turnedBeams(0.5, 30), 0.005, 201, 30)
    for (const { k, error, U } of within(r, BOX)) expect(Math.abs(error), `${k}: error ${(error * 1000).toFixed(2)} mm, U ${(U * 1000).toFixed(2)} mm`).toBeLessThanOrEqual(U)
    const angle = ((Math.atan2(r.box.axes[0][1], r.box.axes[0][0]) * 180) / Math.PI + 360) % 180
    expect(angle).toBeCloseTo(30, 0)
  })

  test('50 trials at 10 mm range noise: the truth within U for at least 90 % of them (seen: length 94 %, width 100 %, height 100 %), U not inflated', () => {
    const beams = castStations(stationsAround(0, 0, 2.0, 1.8, AROUND, 0.45, 0.7), boxSurfaces())
    const trials = Array.from({ length: 50 }, (_, i) => within(sizesOf(beams, 0.01, 1000 + i), BOX))
    for (const k of ['length', 'width', 'height'] as const) {
      const rows = trials.map((t) => t.find((x) => x.k === k)!)
      const covered = rows.filter((x) => Math.abs(x.error) <= x.U).length / rows.length
      const rms = Math.sqrt(rows.reduce((a, x) => a + x.error ** 2, 0) / rows.length)
      const medianU = rows.map((x) => x.U).sort((a, b) => a - b)[rows.length >> 1]!
      const where = `${k}: coverage ${(covered * 100).toFixed(0)} %, RMS error ${(rms * 1000).toFixed(2)} mm, median U ${(medianU * 1000).toFixed(2)} mm`
      expect(covered, where).toBeGreaterThanOrEqual(0.9)
      // The top is seen at grazing angles, where range noise lies mostly along it: its fit's s is held at the
      // stated point uncertainty (as every edge fit is, edges.ts), so the height's U is wider than its spread.
      expect(medianU, where).toBeLessThanOrEqual((k === 'height' ? 8 : 3) * rms)
    }
  }, 30_000)
})

describe('a drum standing on its end (a curved side)', () => {
  test('0.60 m across and 0.90 m high: its diameter within U both ways in 10 trials at each noise, no bias, the sides found curved', () => {
    const beams = castStations(stationsAround(0, 0, 2.0, 1.8, AROUND, 0.45, 0.5), [FLOOR], [{ kind: 'upright', centre: [0, 0], radius: 0.3, z0: 0, z1: 0.9 }])
    for (const sigma of [0.002, 0.01]) {
      const rows: { error: number; U: number }[] = []
      for (let i = 0; i < 10; i++) {
        const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.35], turnDeg: 0, cutBelow: Math.max(0.01, 4 * sigma) }, sigma, REG_U, 301 + i)
        const r = measureSizes(scan.points, scan.around, options(scan, sigma))
        if (!r.ok) throw new Error(r.detail)
        expect(r.curved.sort()).toEqual(['length', 'width'])
        rows.push(...within(r, { length: 0.6, width: 0.6, height: 0.9 }))
      }
      const covered = rows.filter((x) => Math.abs(x.error) <= x.U).length / rows.length
      const mean = rows.reduce((a, x) => a + x.error, 0) / rows.length
      const medianU = rows.map((x) => x.U).sort((a, b) => a - b)[rows.length >> 1]!
      const where = `${sigma * 1000} mm: coverage ${(covered * 100).toFixed(0)} %, mean error ${(mean * 1000).toFixed(2)} mm, median U ${(medianU * 1000).toFixed(2)} mm`
      // 30 values (10 trials x 3 sizes) at a nominal 95 %: 85 % fails a calibrated U with well under 1 % chance.
      expect(covered, where).toBeGreaterThanOrEqual(0.85)
      expect(Math.abs(mean), where).toBeLessThanOrEqual(medianU / 2)
    }
  }, 30_000)
})

describe('bad input', () => {
  test('too few points, a coordinate that is not a number, members that do not add up: a reason, never NaN', () => {
    const members = (count: number) => [{ name: 'a', registrationU: 0, count }]
    expect(measureSizes(new Float64Array(30), new Float64Array(0), { sigma: 0.001, spacing: 0.01, members: members(10) })).toMatchObject({ ok: false, reason: 'too-few-points' })
    const pts = new Float64Array(300).map((_, i) => i * 0.001)
    pts[7] = NaN
    expect(measureSizes(pts, new Float64Array(0), { sigma: 0.001, spacing: 0.01, members: members(100) })).toMatchObject({ ok: false, reason: 'not-finite', detail: 'point 3 has a coordinate that is not a number.' })
    pts[7] = 0
    expect(measureSizes(pts, new Float64Array(0), { sigma: 0.001, spacing: 0.01, members: members(99) })).toMatchObject({ ok: false, reason: 'members-mismatch' })
  })
})
