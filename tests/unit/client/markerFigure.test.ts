// The section figure's geometry. Lengths and positions are derived by hand from the inputs (plane geometry,
// no outside table needed) and named so beside each check; chords are cross-checked against
// robust-point-in-polygon (a general-purpose reference library) for inside and boundary.
import { describe, expect, it } from 'vitest'
import classifyPoint from 'robust-point-in-polygon'
import {
  boundsOf,
  centredSpan,
  chordThrough,
  dimensionLine,
  dotsPath,
  fitViewBox,
  focusBox,
  pointsAttr,
  scaleBarLength,
  SCALE_BAR_METRES,
} from '@/components/markers/markerFigure'

const ring = (...pts: number[][]) => pts.flat()
const pairs = (xy: number[]) => Array.from({ length: xy.length >> 1 }, (_, i) => [xy[2 * i]!, xy[2 * i + 1]!] as [number, number])
// L-shape: a 2 x 2 square missing its top-right 1 x 1 quarter (derived).
const lShape = ring([0, 0], [2, 0], [2, 1], [1, 1], [1, 2], [0, 2])
// A doorway seen in a wall section: a U with two prongs, free between u = 1 and u = 2 above v = 1 (derived).
const prongs = ring([0, 0], [3, 0], [3, 3], [2, 3], [2, 1], [1, 1], [1, 3], [0, 3])

describe('bounds', () => {
  it('spans every finite pair of every array and skips the rest', () => {
    expect(boundsOf([[1, 2, -3, 4], [0.5, -1, NaN, 9]])).toEqual({ uMin: -3, uMax: 1, vMin: -1, vMax: 4 })
  })
  it('is null for nothing to draw', () => {
    expect(boundsOf([[], [NaN, 1]])).toBeNull()
  })
})

describe('the part worth drawing', () => {
  const all = { uMin: 0, uMax: 8, vMin: 0, vMax: 4.5 }
  it('draws round an opening with 0.4 of its larger side as context (1.4\u00a0m x 2.1 m: 0.84\u00a0m round it, derived)', () => {
    const b = focusBox(all, { uMin: 3, uMax: 4.4, vMin: 0, vMax: 2.1 })
    expect(b.uMin).toBeCloseTo(2.16, 12)
    expect(b.uMax).toBeCloseTo(5.24, 12)
    expect(b.vMin).toBe(0) // kept within everything drawn
    expect(b.vMax).toBeCloseTo(2.94, 12)
  })
  it('keeps at least the least context round a small focus, and everything without one', () => {
    const b = focusBox(all, { uMin: 4, uMax: 4.1, vMin: 1, vMax: 1.1 }, 0.4, 0.3)
    expect([b.uMin, b.uMax, b.vMin, b.vMax].map((x) => Math.round(x * 1e9) / 1e9)).toEqual([3.7, 4.4, 0.7, 1.4])
    expect(focusBox(all, null)).toEqual(all)
  })
})

describe('fitting the view box', () => {
  const options = { maxWidth: 400, maxHeight: 340, padPx: 30, bottomPx: 34 }

  it('uses one scale for u and v, the largest that fits (2\u00a0m x 1 m: 340 px / 2\u00a0m = 170 px/m, derived)', () => {
    const f = fitViewBox({ uMin: -1, uMax: 1, vMin: 0, vMax: 1 }, options)
    expect(1 / f.metresPerPx).toBeCloseTo(170, 9)
    expect(f.width).toBeCloseTo(400, 9)
    expect(f.height).toBeCloseTo(170 + 60 + 34, 9)
    const [x, y, w, h] = f.viewBox
    // Flipped: the top of the box is -vMax, padded by 30 px = 30 / 170 m.
    expect(x).toBeCloseTo(-1 - 30 / 170, 12)
    expect(y).toBeCloseTo(-1 - 30 / 170, 12)
    expect(w / h).toBeCloseTo(f.width / f.height, 12)
    expect(w).toBeCloseTo(f.width * f.metresPerPx, 12)
  })

  it('lets a tall box take the height and narrows the drawing (0.9\u00a0m x 2.1 m: 246 px / 2.1 m, derived)', () => {
    const f = fitViewBox({ uMin: 0, uMax: 0.9, vMin: 0, vMax: 2.1 }, options)
    expect(1 / f.metresPerPx).toBeCloseTo(246 / 2.1, 9)
    expect(f.width).toBeCloseTo(0.9 * (246 / 2.1) + 60, 9)
    expect(f.height).toBeCloseTo(340, 9)
  })

  it('widens a single point to the least span instead of dividing by zero', () => {
    const f = fitViewBox({ uMin: 2, uMax: 2, vMin: 5, vMax: 5 }, { ...options, minSpan: 0.1 })
    expect(Number.isFinite(f.metresPerPx)).toBe(true)
    expect(f.data).toEqual({ uMin: 1.95, uMax: 2.05, vMin: 4.95, vMax: 5.05 })
  })
})

describe('scale bar', () => {
  it('takes the longest round metric length within 30 % of the span', () => {
    expect(scaleBarLength(3, 'm')).toBe(0.5) // 0.9\u00a0m allowed
    expect(scaleBarLength(1, 'mm')).toBe(0.2) // 0.3\u00a0m allowed
    expect(scaleBarLength(10, 'm')).toBe(2) // the longest step
    expect(scaleBarLength(0.2, 'm')).toBe(0.1) // the shortest, even above 30 %
    expect(scaleBarLength(1 / 0.3, 'm')).toBe(1) // exactly 1\u00a0m allowed
    for (const s of [0.05, 0.4, 2.5, 7]) expect(SCALE_BAR_METRES).toContain(scaleBarLength(s, 'm'))
  })
  it('takes round feet and inches in ft-in (1 ft = 0.3048\u00a0m exactly, NIST SP 811 appendix B)', () => {
    expect(scaleBarLength(3, 'ft-in')).toBeCloseTo(2 * 0.3048, 12) // 2 ft within 0.9 m
    expect(scaleBarLength(0.6, 'ft-in')).toBeCloseTo(6 * 0.0254, 12) // 6 in within 0.18 m
  })
})

describe('dimension lines', () => {
  const options = { tick: 0.02, gap: 0.01 }

  it('measures a 3-4-5 triangle side as 5 (Pythagoras) and writes along it', () => {
    const d = dimensionLine([0, 0], [3, 4], options)!
    expect(d.length).toBeCloseTo(5, 12)
    expect(d.angle).toBeCloseTo((Math.atan2(4, 3) * 180) / Math.PI, 12)
    expect(d.extensions).toEqual([])
  })

  it('moves a horizontal line sideways by the offset, with extension lines back to the points', () => {
    const d = dimensionLine([0, 0], [1, 0], { ...options, offset: 0.1 })!
    expect(d.from[0]).toBeCloseTo(0, 12)
    expect(d.from[1]).toBeCloseTo(0.1, 12)
    expect(d.to[0]).toBeCloseTo(1, 12)
    expect(d.to[1]).toBeCloseTo(0.1, 12)
    expect(d.extensions).toHaveLength(2)
    expect(d.angle).toBeCloseTo(0, 12)
    expect(d.label[1]).toBeGreaterThan(0.1) // above the line
  })

  it('keeps text readable: a right-to-left line reads left to right, a downward one upwards', () => {
    const back = dimensionLine([1, 0], [0, 0], options)!
    expect(back.angle).toBeCloseTo(0, 12)
    expect(back.label[1]).toBeGreaterThan(0)
    const down = dimensionLine([0, 1], [0, 0], options)!
    expect(down.angle).toBeCloseTo(90, 12)
    expect(down.label[0]).toBeLessThan(0) // left of an upward reading line
  })

  it('draws its ticks at 45 degrees to the line, tick long, centred on the ends', () => {
    const d = dimensionLine([0, 0], [2, 1], options)!
    const dir = [2 / Math.sqrt(5), 1 / Math.sqrt(5)]
    for (const [p, q] of d.ticks) {
      const t = [q[0] - p[0], q[1] - p[1]]
      const len = Math.hypot(t[0]!, t[1]!)
      expect(len).toBeCloseTo(options.tick, 12)
      expect((t[0]! * dir[0]! + t[1]! * dir[1]!) / len).toBeCloseTo(Math.SQRT1_2, 12)
    }
    expect((d.ticks[1]![0][0] + d.ticks[1]![1][0]) / 2).toBeCloseTo(2, 12)
  })

  it('puts the value a given share of the way along', () => {
    const d = dimensionLine([0, 0], [0, 2], { ...options, labelAt: 0.75 })!
    expect(d.label[1]).toBeCloseTo(1.5, 12)
    expect(d.label[0]).toBeCloseTo(-options.gap, 12)
  })

  it('gives no line between coincident points', () => {
    expect(dimensionLine([1, 1], [1, 1], options)).toBeNull()
  })
})

describe('chords through an outline', () => {
  it('finds where a row and a column cross an L-shape (derived)', () => {
    expect(chordThrough(lShape, 'v', 0.5, 1)).toEqual([0, 2])
    expect(chordThrough(lShape, 'v', 1.5, 0.5)).toEqual([0, 1])
    expect(chordThrough(lShape, 'u', 1.5, 0.5)).toEqual([0, 1])
  })

  it('picks the stretch that holds the seed, else the nearest one', () => {
    const around = ring([0, 0], [3, 0], [3, 1], [0, 1])
    // Two separate inside stretches at v = 2 of the prongs: [0, 1] and [2, 3].
    expect(chordThrough(prongs, 'v', 2, 2.5)).toEqual([2, 3])
    expect(chordThrough(prongs, 'v', 2, 0.2)).toEqual([0, 1])
    expect(chordThrough(prongs, 'v', 2, 1.4)).toEqual([0, 1])
    expect(chordThrough(around, 'v', 5, 1)).toBeNull()
    expect(chordThrough([0, 0, 1, 1], 'v', 0.5, 0)).toBeNull()
  })

  it('agrees with robust-point-in-polygon: the middle inside, the ends on the boundary (reference library)', () => {
    const loop = pairs(prongs)
    for (const [axis, at, near] of [['v', 2, 2.5], ['v', 0.5, 1.5], ['u', 0.5, 1], ['u', 2.5, 2]] as const) {
      const c = chordThrough(prongs, axis, at, near)!
      const point = (x: number): [number, number] => (axis === 'v' ? [x, at] : [at, x])
      expect(classifyPoint(loop, point((c[0] + c[1]) / 2))).toBe(-1)
      expect(classifyPoint(loop, point(c[0]))).toBe(0)
      expect(classifyPoint(loop, point(c[1]))).toBe(0)
    }
  })

  it('centres a stated width on the chord it was measured in', () => {
    expect(centredSpan([1, 2], 1.2)).toEqual([0.9, 2.1])
  })
})

describe('SVG text', () => {
  it('flips v into SVG y', () => {
    expect(pointsAttr([1, 2, -0.5, 0.25])).toBe('1,-2 -0.5,-0.25')
  })
  it('writes dots as zero-length segments (round caps paint them, SVG 1.1 section 11.4) and skips non-finite points', () => {
    expect(dotsPath([1, 2, NaN, 0, 0.123456, -1])).toBe('M1 -2h0M0.12346 1h0')
  })
})
