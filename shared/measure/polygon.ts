import concaveman from 'concaveman'

/**
 * Plane polygons and outlines over interleaved x y pairs (Float64Array [x0, y0, x1, y1, ...]), in the
 * section's 2D frame (metres, u to the right and v up, see slab.ts). A polygon is a ring of vertices
 * without the first one repeated; anticlockwise (positive area) is the orientation every function here
 * returns.
 */

/** Shoelace signed area: positive for an anticlockwise ring; fewer than 3 vertices give 0. */
export function signedArea(xy: ArrayLike<number>): number {
  const n = xy.length >> 1
  if (n < 3) return 0
  // About the first vertex: avoids cancellation for rings far from the origin.
  const x0 = xy[0]!, y0 = xy[1]!
  let twice = 0
  for (let i = 1; i < n - 1; i++) {
    const ax = xy[2 * i]! - x0, ay = xy[2 * i + 1]! - y0
    const bx = xy[2 * i + 2]! - x0, by = xy[2 * i + 3]! - y0
    twice += ax * by - bx * ay
  }
  return twice / 2
}

export function polygonArea(xy: ArrayLike<number>): number {
  return Math.abs(signedArea(xy))
}

/**
 * Even-odd point in polygon (crossing number, ray towards +x). Works for any ring orientation and for
 * self-intersecting rings (even-odd rule).
 * Boundary: an edge counts as crossed when exactly one end lies strictly above the point (half-open in y)
 * and the crossing lies strictly right of it. So points on a boundary are decided by that rule, not by a
 * tolerance: for an axis-aligned rectangle, the left and bottom sides read inside, the right and top sides
 * outside, and a point on an edge shared by two adjacent polygons belongs to exactly one of them. A caller
 * that needs "on the boundary" as its own answer tests the distance to the edges itself.
 */
export function pointInPolygon(xy: ArrayLike<number>, px: number, py: number): boolean {
  const n = xy.length >> 1
  let inside = false
  for (let i = 0, j = n - 1; i < n; j = i++) {
    const xi = xy[2 * i]!, yi = xy[2 * i + 1]!, xj = xy[2 * j]!, yj = xy[2 * j + 1]!
    if (yi > py !== yj > py) {
      const x = xi + ((py - yi) * (xj - xi)) / (yj - yi)
      if (px < x) inside = !inside
    }
  }
  return inside
}

export type Hull =
  | { ok: true; xy: Float64Array; indices: Uint32Array }
  | { ok: false; reason: 'too-few-points' | 'collinear' }

const orient = (ox: number, oy: number, ax: number, ay: number, bx: number, by: number) =>
  (ax - ox) * (by - oy) - (ay - oy) * (bx - ox)

/**
 * Convex hull by Andrew's monotone chain (Andrew 1979): anticlockwise, starting from the lowest-x (then
 * lowest-y) point, collinear and repeated points dropped. indices refer to the input points.
 * Degenerate input: fewer than 3 distinct points, or all on one line, have no polygon hull.
 */
export function convexHull(xy: ArrayLike<number>): Hull {
  const n = xy.length >> 1
  if (n < 3) return { ok: false, reason: 'too-few-points' }
  const order = new Uint32Array(n)
  for (let i = 0; i < n; i++) order[i] = i
  order.sort((i, j) => xy[2 * i]! - xy[2 * j]! || xy[2 * i + 1]! - xy[2 * j + 1]!)
  const stack = new Uint32Array(2 * n + 1)
  let k = 0
  const sweep = (index: number, floor: number) => {
    const x = xy[2 * index]!, y = xy[2 * index + 1]!
    while (k >= floor) {
      const p = stack[k - 2]!, q = stack[k - 1]!
      if (orient(xy[2 * p]!, xy[2 * p + 1]!, xy[2 * q]!, xy[2 * q + 1]!, x, y) > 0) break
      k--
    }
    stack[k++] = index
  }
  for (let i = 0; i < n; i++) sweep(order[i]!, 2)
  const lower = k + 1
  for (let i = n - 2; i >= 0; i--) sweep(order[i]!, lower)
  k-- // the last point repeats the first
  if (k < 3) {
    const first = order[0]!, last = order[n - 1]!
    const same = xy[2 * first] === xy[2 * last] && xy[2 * first + 1] === xy[2 * last + 1]
    return { ok: false, reason: same ? 'too-few-points' : 'collinear' }
  }
  const indices = stack.slice(0, k)
  const out = new Float64Array(2 * k)
  for (let i = 0; i < k; i++) {
    out[2 * i] = xy[2 * indices[i]!]!
    out[2 * i + 1] = xy[2 * indices[i]! + 1]!
  }
  return { ok: true, xy: out, indices }
}

/** Default ratio of the concave outline's edge-length threshold to the point spacing (2-3, common practice). */
export const OUTLINE_SPACING_FACTOR = 2.5

export type Outline = { ok: true; xy: Float64Array } | { ok: false; reason: 'too-few-points' | 'collinear' | 'invalid-spacing' }

/**
 * Concave outline of a section's points through concaveman (its README cites Park and Oh 2012; from memory).
 * concaveman is ESM with a default export; @types/concaveman declares `export =`, which esModuleInterop
 * maps to the same default import.
 * The scale is tied to the point spacing the way an alpha shape's alpha is (about 2-3 spacings, common
 * practice): edges shorter than factor x spacing are never dug into, so the outline does not fall into the
 * gaps between neighbouring points. concavity is concaveman's relative parameter (2 by default; Infinity
 * gives the convex hull, as an alpha shape does when alpha grows: Edelsbrunner et al. 1983).
 * Returns an anticlockwise ring without the repeated closing vertex.
 */
export function concaveOutline(
  xy: ArrayLike<number>,
  spacing: number,
  factor = OUTLINE_SPACING_FACTOR,
  concavity = 2,
): Outline {
  if (!(Number.isFinite(spacing) && spacing > 0)) return { ok: false, reason: 'invalid-spacing' }
  const hull = convexHull(xy)
  if (!hull.ok) return hull
  const n = xy.length >> 1
  const points: number[][] = new Array(n)
  for (let i = 0; i < n; i++) points[i] = [xy[2 * i]!, xy[2 * i + 1]!]
  const ring = concaveman(points, concavity, factor * spacing)
  const first = ring[0]!, last = ring[ring.length - 1]!
  const m = first[0] === last[0] && first[1] === last[1] ? ring.length - 1 : ring.length
  const out = new Float64Array(2 * m)
  for (let i = 0; i < m; i++) {
    out[2 * i] = ring[i]![0]!
    out[2 * i + 1] = ring[i]![1]!
  }
  if (signedArea(out) < 0) reverseRing(out)
  return { ok: true, xy: out }
}

function reverseRing(xy: Float64Array): void {
  const n = xy.length >> 1
  for (let i = 0, j = n - 1; i < j; i++, j--) {
    const x = xy[2 * i]!, y = xy[2 * i + 1]!
    xy[2 * i] = xy[2 * j]!
    xy[2 * i + 1] = xy[2 * j + 1]!
    xy[2 * j] = x
    xy[2 * j + 1] = y
  }
}
