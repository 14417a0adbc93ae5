import { describe, expect, it } from 'vitest'
import referenceHull from 'monotone-convex-hull-2d'
import classifyPoint from 'robust-point-in-polygon'
import { concaveOutline, convexHull, pointInPolygon, polygonArea, signedArea } from '@shared/measure/polygon'
import { mulberry32 } from './random'

const ring = (...pts: number[][]) => Float64Array.from(pts.flat())
const pairs = (xy: ArrayLike<number>) => Array.from({ length: xy.length >> 1 }, (_, i) => [xy[2 * i]!, xy[2 * i + 1]!])
const square = ring([0, 0], [1, 0], [1, 1], [0, 1])
// L-shape: a 2 x 2 square missing its top-right 1 x 1 quarter, area 3 (derived).
const lShape = ring([0, 0], [2, 0], [2, 1], [1, 1], [1, 2], [0, 2])

describe('shoelace area', () => {
  it('gives known areas: unit square 1, triangle base 4 height 3 = 6, L-shape 3 (derived)', () => {
    expect(signedArea(square)).toBe(1)
    expect(signedArea(ring([0, 0], [4, 0], [1, 3]))).toBe(6)
    expect(signedArea(lShape)).toBe(3)
  })

  it('is negative for a clockwise ring, unchanged far from the origin, 0 for a degenerate ring', () => {
    expect(signedArea(ring([0, 0], [0, 1], [1, 1], [1, 0]))).toBe(-1)
    expect(polygonArea(ring([0, 0], [0, 1], [1, 1], [1, 0]))).toBe(1)
    const far = Float64Array.from(lShape, (c, i) => c + (i % 2 ? 5e6 : 3e6))
    expect(signedArea(far)).toBeCloseTo(3, 6)
    expect(signedArea(ring([0, 0], [1, 1]))).toBe(0)
  })
})

describe('point in polygon (even-odd)', () => {
  it('agrees with robust-point-in-polygon off the boundary on random points (reference library)', () => {
    const rand = mulberry32(3)
    // A concave star, 9 points.
    const star: number[] = []
    for (let k = 0; k < 18; k++) {
      const r = k % 2 ? 0.4 : 1
      star.push(r * Math.cos((Math.PI * k) / 9), r * Math.sin((Math.PI * k) / 9))
    }
    for (const poly of [lShape, Float64Array.from(star)]) {
      const loop = pairs(poly)
      let inside = 0
      for (let i = 0; i < 3000; i++) {
        const p = [rand() * 3 - 1, rand() * 3 - 1]
        const expected = classifyPoint(loop, p)
        if (expected === 0) continue
        expect(pointInPolygon(poly, p[0]!, p[1]!)).toBe(expected === -1)
        if (expected === -1) inside++
      }
      expect(inside).toBeGreaterThan(100)
    }
  })

  it('puts boundary points of an axis-aligned square by the half-open rule (documented)', () => {
    expect(pointInPolygon(square, 0, 0.5)).toBe(true) // left side
    expect(pointInPolygon(square, 0.5, 0)).toBe(true) // bottom side
    expect(pointInPolygon(square, 1, 0.5)).toBe(false) // right side
    expect(pointInPolygon(square, 0.5, 1)).toBe(false) // top side
    // A point on an edge shared by two adjacent squares belongs to exactly one of them.
    const right = ring([1, 0], [2, 0], [2, 1], [1, 1])
    for (const y of [0.1, 0.5, 0.9]) expect(Number(pointInPolygon(square, 1, y)) + Number(pointInPolygon(right, 1, y))).toBe(1)
  })
})

describe('convex hull (monotone chain)', () => {
  it('finds the same vertices as monotone-convex-hull-2d on random sets (reference library)', () => {
    const rand = mulberry32(21)
    for (let trial = 0; trial < 50; trial++) {
      const n = 3 + Math.floor(rand() * 300)
      const xy = new Float64Array(2 * n)
      // Coarse grid values make repeats and collinear runs likely.
      for (let i = 0; i < 2 * n; i++) xy[i] = trial % 2 ? Math.round(rand() * 20) : rand() * 100
      const ours = convexHull(xy)
      const theirs = referenceHull(pairs(xy))
      if (theirs.length < 3) {
        expect(ours.ok).toBe(false)
        continue
      }
      expect(ours.ok).toBe(true)
      if (!ours.ok) return
      const key = (i: number) => `${xy[2 * i]},${xy[2 * i + 1]}`
      expect(new Set(Array.from(ours.indices, key))).toEqual(new Set(theirs.map(key)))
      expect(ours.indices.length).toBe(theirs.length)
      expect(signedArea(ours.xy)).toBeGreaterThan(0)
    }
  })

  it('drops collinear and repeated points and refuses sets without a polygon hull', () => {
    const r = convexHull(ring([0, 0], [1, 0], [2, 0], [2, 2], [0, 2], [1, 1], [1, 0], [0, 0]))
    expect(r.ok && Array.from(r.xy)).toEqual([0, 0, 2, 0, 2, 2, 0, 2])
    expect(convexHull(ring([0, 0], [1, 1]))).toEqual({ ok: false, reason: 'too-few-points' })
    expect(convexHull(ring([0, 0], [1, 1], [2, 2], [3, 3]))).toEqual({ ok: false, reason: 'collinear' })
    expect(convexHull(ring([1, 1], [1, 1], [1, 1]))).toEqual({ ok: false, reason: 'too-few-points' })
  })
})

describe('concave outline', () => {
  // A filled L of grid points at 0.05 m spacing, area 3 (derived).
  const spacing = 0.05
  const grid: number[] = []
  for (let i = 0; i <= 40; i++) for (let j = 0; j <= 40; j++) {
    const x = i * spacing, y = j * spacing
    if (x <= 1 + 1e-9 || y <= 1 + 1e-9) grid.push(x, y)
  }
  const points = Float64Array.from(grid)

  it('follows the notch of an L-shape that the convex hull bridges (area 3 vs 3.5, derived)', () => {
    const hull = convexHull(points)
    expect(hull.ok && polygonArea(hull.xy)).toBeCloseTo(3.5, 9)
    const outline = concaveOutline(points, spacing)
    expect(outline.ok).toBe(true)
    if (!outline.ok) return
    expect(signedArea(outline.xy)).toBeGreaterThan(0)
    // Within one spacing-wide strip along the notch's two inner sides.
    expect(Math.abs(signedArea(outline.xy) - 3)).toBeLessThan(2 * spacing)
    expect(pointInPolygon(outline.xy, 1.5, 1.5)).toBe(false)
    expect(pointInPolygon(outline.xy, 0.5, 1.5)).toBe(true)
  })

  it('tends to the convex hull as concavity grows (published: Edelsbrunner et al. 1983, for alpha shapes)', () => {
    const outline = concaveOutline(points, spacing, 2.5, Number.POSITIVE_INFINITY)
    expect(outline.ok && polygonArea(outline.xy)).toBeCloseTo(3.5, 9)
  })

  it('refuses a bad spacing and a set without a polygon hull', () => {
    expect(concaveOutline(points, 0)).toEqual({ ok: false, reason: 'invalid-spacing' })
    expect(concaveOutline(ring([0, 0], [1, 1], [2, 2]), 0.1)).toEqual({ ok: false, reason: 'collinear' })
  })
})
