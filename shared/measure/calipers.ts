import { convexHull } from './polygon'

/**
 * Minimum width and minimum-area enclosing rectangle of a 2D point set by rotating calipers over its
 * convex hull (Toussaint 1983, "Solving geometric problems with the rotating calipers"). Both optima have a
 * side on a hull edge (Freeman and Shapira 1975, CACM 18(7)), so one sweep over the edges suffices: for each
 * edge the farthest vertex across it and the extreme vertices along it move monotonically round the hull,
 * O(h) after the hull.
 *
 * Input: interleaved x y (any order; the hull is taken here), metres in the section frame. Angles are of the
 * supporting edge's direction, degrees in [0, 180) anticlockwise from +u. Corners are anticlockwise.
 * Degenerate input: fewer than 3 distinct points or all collinear give { ok: false } (the width of a
 * segment is 0 but it has no rectangle worth reporting; the caller decides).
 */

export type MinimumWidth =
  | { ok: true; width: number; angleDegrees: number; normal: [number, number]; edge: [number, number]; vertex: number }
  | { ok: false; reason: 'too-few-points' | 'collinear' }

export type EnclosingRectangle =
  | { ok: true; area: number; width: number; length: number; angleDegrees: number; corners: Float64Array }
  | { ok: false; reason: 'too-few-points' | 'collinear' }

interface EdgeFrame {
  /** Edge start index in the hull, unit direction and inward normal. */
  i: number
  ex: number
  ey: number
  height: number
  top: number
  lo: number
  hi: number
  minAlong: number
  maxAlong: number
}

/** Sweeps the hull edges with the calipers and returns the edge frame of least score. */
function bestEdge(h: Float64Array, score: (f: EdgeFrame) => number): { frame: EdgeFrame; score: number } {
  let best: EdgeFrame | null = null
  let bestScore = Infinity
  const n = h.length >> 1
  const x = (k: number) => h[2 * (k % n)]!
  const y = (k: number) => h[2 * (k % n) + 1]!
  let top = 1, hi = 1, lo = 0
  for (let i = 0; i < n; i++) {
    const ox = x(i), oy = y(i)
    let ex = x(i + 1) - ox, ey = y(i + 1) - oy
    const len = Math.hypot(ex, ey)
    ex /= len
    ey /= len
    // Inward normal of an anticlockwise ring is the left normal (-ey, ex).
    const across = (k: number) => -ey * (x(k) - ox) + ex * (y(k) - oy)
    const along = (k: number) => ex * (x(k) - ox) + ey * (y(k) - oy)
    if (i === 0) {
      for (let k = 1; k < n; k++) {
        if (across(k) > across(top)) top = k
        if (along(k) > along(hi)) hi = k
        if (along(k) < along(lo)) lo = k
      }
    } else {
      // Each caliper only moves forward; n steps bound a full turn.
      for (let s = 0; s < n && across(top + 1) >= across(top); s++) top = (top + 1) % n
      for (let s = 0; s < n && along(hi + 1) >= along(hi); s++) hi = (hi + 1) % n
      for (let s = 0; s < n && along(lo + 1) <= along(lo); s++) lo = (lo + 1) % n
    }
    const frame: EdgeFrame = { i, ex, ey, height: across(top), top, lo, hi, minAlong: along(lo), maxAlong: along(hi) }
    const value = score(frame)
    if (best === null || value < bestScore) {
      best = frame
      bestScore = value
    }
  }
  // A hull has at least 3 edges, so best is set.
  return { frame: best!, score: bestScore }
}

const edgeAngle = (ex: number, ey: number) => {
  const degrees = (Math.atan2(ey, ex) * 180) / Math.PI
  const folded = ((degrees % 180) + 180) % 180
  return folded >= 180 - 1e-12 ? 0 : folded
}

export function minimumWidth(xy: ArrayLike<number>): MinimumWidth {
  const hull = convexHull(xy)
  if (!hull.ok) return hull
  const n = hull.xy.length >> 1
  const b = bestEdge(hull.xy, (f) => f.height).frame
  return {
    ok: true,
    width: b.height,
    angleDegrees: edgeAngle(b.ex, b.ey),
    normal: [-b.ey, b.ex],
    edge: [hull.indices[b.i]!, hull.indices[(b.i + 1) % n]!],
    vertex: hull.indices[b.top]!,
  }
}

export function minimumAreaRectangle(xy: ArrayLike<number>): EnclosingRectangle {
  const hull = convexHull(xy)
  if (!hull.ok) return hull
  const h = hull.xy
  const { frame: b, score: bestArea } = bestEdge(h, (f) => f.height * (f.maxAlong - f.minAlong))
  const ox = h[2 * b.i]!, oy = h[2 * b.i + 1]!
  const nx = -b.ey, ny = b.ex
  const corners = new Float64Array(8)
  const put = (k: number, s: number, t: number) => {
    corners[2 * k] = ox + b.ex * s + nx * t
    corners[2 * k + 1] = oy + b.ey * s + ny * t
  }
  put(0, b.minAlong, 0)
  put(1, b.maxAlong, 0)
  put(2, b.maxAlong, b.height)
  put(3, b.minAlong, b.height)
  const along = b.maxAlong - b.minAlong
  return {
    ok: true,
    area: bestArea,
    width: Math.min(along, b.height),
    length: Math.max(along, b.height),
    angleDegrees: edgeAngle(b.ex, b.ey),
    corners,
  }
}
