import { fitResolution, fitThrough } from './clearance'
import type { FreeOpening } from './opening'
import { convexHull } from './polygon'

/**
 * How a rigid object may be turned or tipped to pass a straight passage, and the best way within limits.
 *
 * Frame: the passage frame, metres: u across the opening, v in the opening's plane, w along the direction of
 * travel (the object's silhouette is its projection along w onto u v). `up` is the world's up direction in
 * that frame (v for an opening in a vertical wall).
 *
 * Orientations are rotations about the object's own centre, as scanned: R = Rup(turn) Rside(tip) Rup(spin),
 * degrees, where Rup turns about the vertical and Rside tips about the horizontal axis across the travel
 * direction (side = up x forward, forward = the travel direction made horizontal). `spin` chooses which face
 * goes down when the object is tipped; `turn` is then the turn about the vertical. This is the z-y-z
 * (proper Euler) form, which reaches every rotation with tip in [0, 180] (a standard result: e.g. Goldstein,
 * Classical Mechanics, 3rd ed., section 4.4).
 *
 * Limits (what a rigger may do with the object):
 * - 'as-it-stands': the scanned orientation only;
 * - 'upright': turned about the vertical only (which side leads), top kept up;
 * - 'tipped': its top at most `maxTipDegrees` from up, turned any way;
 * - 'any': every orientation.
 *
 * Method: the object is reduced once to support points (the points extreme along 642 directions, after
 * keeping each grid column's extremes; every vertex of the convex hull of these is a point of the object, so
 * the projected hull is an inner approximation that misses at most R (1 - cos(delta / 2)) of the true hull,
 * delta the directions' spacing of about 8 degrees: 2.4 mm for an object of radius 1 m). A coarse grid of
 * orientations (default 10 degrees) is ranked by an upper bound of the margin (the caller's, e.g. from the
 * opening's extents), the margin is computed in bound order until no remaining bound can beat the best
 * (branch and bound, exact with respect to the bound), and the best is refined by a pattern search on the
 * three angles with steps halving to `fineDegrees` (default 0.5). The margin function is the caller's (a fit
 * of the silhouette through the opening at a fixed in-plane orientation): the search is only as good as it.
 * Several orientations may tie (a box turned 90 or 270 degrees; a cabinet tipped anywhere between 70 and 110
 * degrees when its width, not its height, is what limits it). A rigger prefers the plainest of them, so the
 * best is then moved to the roundest angles (multiples of 90, then 45, 15, 5 degrees) that lose at most
 * `tieTolerance` (default 1 mm) of margin, upright before tipped; the margin reported is the reported
 * orientation's own, so re-evaluating it gives the reported margin.
 */

export type Vec3 = readonly [number, number, number]
/** Row-major 3 x 3 rotation. */
export type Mat3 = [number, number, number, number, number, number, number, number, number]

export type OrientationMode = 'as-it-stands' | 'upright' | 'tipped' | 'any'

export interface OrientationLimits {
  mode: OrientationMode
  /** 'tipped' only: the most the object's top may lean from up, degrees (0 to 180). */
  maxTipDegrees?: number
}

export interface Orientation {
  turn: number
  tip: number
  spin: number
  /** R in the passage frame: a point p of the object (about its centre) goes to R p. */
  matrix: Mat3
}

export interface OrientationSearch {
  ok: true
  best: Orientation
  margin: number
  /** The margin as it stands (the identity), for comparison. */
  asItStands: number
  /** The best orientation in a rigger's words. */
  words: string
  /** Margins computed, and orientations ranked by their bound only. */
  evaluated: number
  considered: number
}

export type OrientationResult = OrientationSearch | { ok: false; reason: 'too-few-points' | 'not-finite' | 'invalid-limits' | 'invalid-frame' }

const DEG = Math.PI / 180

function normalise(a: Vec3): [number, number, number] | null {
  const l = Math.hypot(a[0], a[1], a[2])
  return l > 1e-12 && Number.isFinite(l) ? [a[0] / l, a[1] / l, a[2] / l] : null
}

const cross = (a: Vec3, b: Vec3): [number, number, number] => [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
const dot = (a: Vec3, b: Vec3): number => a[0] * b[0] + a[1] * b[1] + a[2] * b[2]

/** Rotation by `deg` about the unit `axis` (Rodrigues' formula). */
export function axisRotation(axis: Vec3, deg: number): Mat3 {
  const a = deg * DEG, c = Math.cos(a), s = Math.sin(a), t = 1 - c
  const [x, y, z] = axis
  return [t * x * x + c, t * x * y - s * z, t * x * z + s * y, t * x * y + s * z, t * y * y + c, t * y * z - s * x, t * x * z - s * y, t * y * z + s * x, t * z * z + c]
}

export function multiply(a: Mat3, b: Mat3): Mat3 {
  const out = new Array(9) as Mat3
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++) out[3 * i + j] = a[3 * i]! * b[j]! + a[3 * i + 1]! * b[3 + j]! + a[3 * i + 2]! * b[6 + j]!
  return out
}

export const apply = (m: Mat3, p: Vec3): [number, number, number] => [
  m[0] * p[0] + m[1] * p[1] + m[2] * p[2],
  m[3] * p[0] + m[4] * p[1] + m[5] * p[2],
  m[6] * p[0] + m[7] * p[1] + m[8] * p[2],
]

/** The passage's own axes: up, forward (travel made horizontal) and side (up x forward). */
export interface PassageAxes {
  up: [number, number, number]
  forward: [number, number, number]
  side: [number, number, number]
}

/** Axes from the world's up in the passage frame; travel is +w. Null when travel is vertical (a hatch). */
export function passageAxes(up: Vec3): PassageAxes | null {
  const u = normalise(up)
  if (!u) return null
  const w: Vec3 = [0, 0, 1]
  const f = normalise([w[0] - dot(w, u) * u[0], w[1] - dot(w, u) * u[1], w[2] - dot(w, u) * u[2]])
  if (!f) return null
  return { up: u, forward: f, side: cross(u, f) }
}

export function orientation(axes: PassageAxes, turn: number, tip: number, spin: number): Orientation {
  const matrix = multiply(axisRotation(axes.up, turn), multiply(axisRotation(axes.side, tip), axisRotation(axes.up, spin)))
  return { turn, tip, spin, matrix }
}

/** Unit directions of an icosphere (icosahedron subdivided `levels` times: 12, 42, 162, 642 ...). */
export function sphereDirections(levels = 3): Vec3[] {
  const p = (1 + Math.sqrt(5)) / 2
  const corners: Vec3[] = [
    [-1, p, 0], [1, p, 0], [-1, -p, 0], [1, -p, 0], [0, -1, p], [0, 1, p], [0, -1, -p], [0, 1, -p], [p, 0, -1], [p, 0, 1], [-p, 0, -1], [-p, 0, 1],
  ]
  let verts = corners.map((v) => normalise(v)!)
  let faces = [
    [0, 11, 5], [0, 5, 1], [0, 1, 7], [0, 7, 10], [0, 10, 11], [1, 5, 9], [5, 11, 4], [11, 10, 2], [10, 7, 6], [7, 1, 8],
    [3, 9, 4], [3, 4, 2], [3, 2, 6], [3, 6, 8], [3, 8, 9], [4, 9, 5], [2, 4, 11], [6, 2, 10], [8, 6, 7], [9, 8, 1],
  ]
  for (let l = 0; l < levels; l++) {
    const mid = new Map<string, number>()
    const middle = (a: number, b: number): number => {
      const key = a < b ? `${a},${b}` : `${b},${a}`
      let m = mid.get(key)
      if (m === undefined) {
        const va = verts[a]!, vb = verts[b]!
        verts.push(normalise([(va[0] + vb[0]) / 2, (va[1] + vb[1]) / 2, (va[2] + vb[2]) / 2])!)
        m = verts.length - 1
        mid.set(key, m)
      }
      return m
    }
    const next: number[][] = []
    for (const [a, b, c] of faces as [number, number, number][]) {
      const ab = middle(a, b), bc = middle(b, c), ca = middle(c, a)
      next.push([a, ab, ca], [b, bc, ab], [c, ca, bc], [ab, bc, ca])
    }
    faces = next
  }
  verts = verts.slice()
  return verts
}

/**
 * Support points of an object's points (x y z triples, passage frame), about their centre (the mean of the
 * support points' bounding box): the points extreme along `directions`, found among each grid column's
 * extremes (64 columns across the object's largest extent, along each axis).
 */
export function supportPoints(xyz: Float64Array, directions: readonly Vec3[] = sphereDirections(3)): { points: Float64Array; centre: [number, number, number] } | null {
  const n = Math.floor(xyz.length / 3)
  if (n < 4) return null
  const lo = [Infinity, Infinity, Infinity], hi = [-Infinity, -Infinity, -Infinity]
  for (let i = 0; i < n; i++)
    for (let a = 0; a < 3; a++) {
      const x = xyz[3 * i + a]!
      if (!Number.isFinite(x)) return null
      if (x < lo[a]!) lo[a] = x
      if (x > hi[a]!) hi[a] = x
    }
  const extent = Math.max(hi[0]! - lo[0]!, hi[1]! - lo[1]!, hi[2]! - lo[2]!)
  if (!(extent > 0)) return null
  const cells = 64, cell = extent / cells
  // Stage 1: per column along each axis, the lowest and highest point.
  const keep = new Set<number>()
  for (let a = 0; a < 3; a++) {
    const b = (a + 1) % 3, c = (a + 2) % 3
    const low = new Map<number, number>(), high = new Map<number, number>()
    for (let i = 0; i < n; i++) {
      const key = Math.floor((xyz[3 * i + b]! - lo[b]!) / cell) * (cells + 1) + Math.floor((xyz[3 * i + c]! - lo[c]!) / cell)
      const v = xyz[3 * i + a]!
      const l = low.get(key)
      if (l === undefined || v < xyz[3 * l + a]!) low.set(key, i)
      const h = high.get(key)
      if (h === undefined || v > xyz[3 * h + a]!) high.set(key, i)
    }
    for (const i of low.values()) keep.add(i)
    for (const i of high.values()) keep.add(i)
  }
  // Stage 2: among those, the point extreme along each direction.
  const candidates = [...keep]
  const chosen = new Set<number>()
  for (const d of directions) {
    let best = -Infinity, arg = -1
    for (const i of candidates) {
      const s = d[0] * xyz[3 * i]! + d[1] * xyz[3 * i + 1]! + d[2] * xyz[3 * i + 2]!
      if (s > best) (best = s), (arg = i)
    }
    chosen.add(arg)
  }
  const centre: [number, number, number] = [(lo[0]! + hi[0]!) / 2, (lo[1]! + hi[1]!) / 2, (lo[2]! + hi[2]!) / 2]
  const points = new Float64Array(3 * chosen.size)
  let k = 0
  for (const i of chosen) for (let a = 0; a < 3; a++) points[k++] = xyz[3 * i + a]! - centre[a]!
  return { points, centre }
}

/** The silhouette (u v pairs) of points (about their centre) turned by `m`, seen along w. */
export function silhouetteOf(points: Float64Array, m: Mat3): Float64Array {
  const n = points.length / 3
  const out = new Float64Array(2 * n)
  for (let i = 0; i < n; i++) {
    const x = points[3 * i]!, y = points[3 * i + 1]!, z = points[3 * i + 2]!
    out[2 * i] = m[0] * x + m[1] * y + m[2] * z
    out[2 * i + 1] = m[3] * x + m[4] * y + m[5] * z
  }
  return out
}

/** The convex hull of a silhouette (fewer samples for the fit), or the silhouette itself when degenerate. */
export function hullOf(silhouette: Float64Array): Float64Array {
  const h = convexHull(silhouette)
  return h.ok ? h.xy : silhouette
}

/**
 * Upper bound of the margin of a silhouette placed in an opening whose free region spans `width` x `height`
 * (metres, the region's extents between the points' surfaces): it must fit inside that box. Carried
 * (centred): the smaller half-slack; resting on the region's floor: the side's half-slack or the head's
 * whole slack. `slack` is added (the fit's grid resolution) so the bound never cuts off a true optimum.
 */
export function boxBound(width: number, height: number, resting: boolean, slack: number): (silhouette: Float64Array) => number {
  return (s) => {
    let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
    for (let i = 0; i < s.length; i += 2) {
      const u = s[i]!, v = s[i + 1]!
      if (u < uMin) uMin = u
      if (u > uMax) uMax = u
      if (v < vMin) vMin = v
      if (v > vMax) vMax = v
    }
    const side = (width - (uMax - uMin)) / 2
    const head = resting ? height - (vMax - vMin) : (height - (vMax - vMin)) / 2
    return Math.min(side, head) + slack
  }
}

interface Angles {
  turn: number
  tip: number
  spin: number
}

function grid(limits: OrientationLimits, step: number): Angles[] {
  const out: Angles[] = [{ turn: 0, tip: 0, spin: 0 }]
  if (limits.mode === 'as-it-stands') return out
  for (let turn = step; turn < 360 - 1e-9; turn += step) out.push({ turn, tip: 0, spin: 0 })
  if (limits.mode === 'upright') return out
  const maxTip = limits.mode === 'any' ? 180 : limits.maxTipDegrees!
  const tips: number[] = []
  for (let tip = step; tip < maxTip - 1e-9; tip += step) tips.push(tip)
  if (maxTip > 0) tips.push(maxTip)
  for (const tip of tips) {
    // Tipped right over, only turn + spin matters (as at tip 0).
    const spins = tip >= 180 - 1e-9 ? [0] : Array.from({ length: Math.round(360 / step) }, (_, i) => i * step)
    for (let turn = 0; turn < 360 - 1e-9; turn += step) for (const spin of spins) out.push({ turn, tip, spin })
  }
  return out
}

function within(limits: OrientationLimits, a: Angles): boolean {
  if (limits.mode === 'as-it-stands') return a.turn === 0 && a.tip === 0 && a.spin === 0
  if (limits.mode === 'upright') return a.tip === 0 && a.spin === 0
  const maxTip = limits.mode === 'any' ? 180 : limits.maxTipDegrees!
  return a.tip >= 0 && a.tip <= maxTip + 1e-9
}

export function searchOrientations(
  points: Float64Array,
  up: Vec3,
  limits: OrientationLimits,
  margin: (silhouette: Float64Array) => number,
  bound: (silhouette: Float64Array) => number,
  options: { coarseDegrees?: number; fineDegrees?: number; tieTolerance?: number } = {},
): OrientationResult {
  if (points.length < 9) return { ok: false, reason: 'too-few-points' }
  for (let i = 0; i < points.length; i++) if (!Number.isFinite(points[i]!)) return { ok: false, reason: 'not-finite' }
  if (limits.mode === 'tipped' && !(Number.isFinite(limits.maxTipDegrees) && limits.maxTipDegrees! >= 0 && limits.maxTipDegrees! <= 180))
    return { ok: false, reason: 'invalid-limits' }
  const coarse = options.coarseDegrees ?? 10
  const fine = options.fineDegrees ?? 0.5
  const tie = options.tieTolerance ?? 0.001
  if (!(coarse > 0 && fine > 0 && fine <= coarse && tie >= 0)) return { ok: false, reason: 'invalid-limits' }
  const axes = passageAxes(up)
  if (!axes) return { ok: false, reason: 'invalid-frame' }

  let evaluated = 0
  const silhouette = (a: Angles) => hullOf(silhouetteOf(points, orientation(axes, a.turn, a.tip, a.spin).matrix))
  const marginOf = (a: Angles): number => {
    evaluated++
    return margin(silhouette(a))
  }

  const asItStands = marginOf({ turn: 0, tip: 0, spin: 0 })
  let best: Angles = { turn: 0, tip: 0, spin: 0 }
  let bestMargin = asItStands
  const ranked = grid(limits, coarse)
    .slice(1)
    .map((a) => ({ a, bound: bound(silhouetteOf(points, orientation(axes, a.turn, a.tip, a.spin).matrix)) }))
    .sort((x, y) => y.bound - x.bound)
  for (const { a, bound: b } of ranked) {
    if (b <= bestMargin) break
    const m = marginOf(a)
    if (m > bestMargin) (bestMargin = m), (best = a)
  }

  // Pattern search on the three angles, steps halving to `fine`.
  if (limits.mode !== 'as-it-stands') {
    const names: (keyof Angles)[] = limits.mode === 'upright' ? ['turn'] : ['turn', 'tip', 'spin']
    for (let step = coarse / 2; step >= fine - 1e-9; step /= 2) {
      let improved = true
      while (improved) {
        improved = false
        for (const name of names)
          for (const sign of [1, -1]) {
            const next = { ...best, [name]: best[name] + sign * step }
            if (name === 'tip' && next.tip < 0) continue
            if (!within(limits, next)) continue
            const m = marginOf(next)
            if (m > bestMargin + 1e-12) (bestMargin = m), (best = next), (improved = true)
          }
      }
    }
  }
  // The plainest orientation that ties with the best.
  if (limits.mode !== 'as-it-stands') {
    const tries: Angles[] = []
    for (const q of [90, 45, 15, 5]) {
      const round = (x: number) => Math.round(x / q) * q
      tries.push({ turn: round(best.turn), tip: 0, spin: 0 }, { turn: round(best.turn), tip: round(best.tip), spin: round(best.spin) })
    }
    for (const a of tries) {
      if (!within(limits, a)) continue
      const m = marginOf(a)
      if (m >= bestMargin - tie) {
        best = a
        bestMargin = m
        break
      }
    }
  }
  const chosen = orientation(axes, wrap(best.turn), best.tip, wrap(best.spin))
  return { ok: true, best: chosen, margin: bestMargin, asItStands, words: describeOrientation(chosen.matrix, axes), evaluated, considered: ranked.length + 1 }
}

/** An angle in (-180, 180]. */
function wrap(deg: number): number {
  let d = ((deg % 360) + 360) % 360
  if (d > 180) d -= 360
  return Math.abs(d) < 1e-9 ? 0 : d
}

type Face = 'top' | 'bottom' | 'front' | 'back' | 'side'

/** The object face (as it stands) whose turned outward normal lies closest to `target`. */
function faceTowards(m: Mat3, axes: PassageAxes, target: Vec3): Face {
  const faces: [Face, Vec3][] = [
    ['top', axes.up],
    ['bottom', [-axes.up[0], -axes.up[1], -axes.up[2]]],
    ['front', axes.forward],
    ['back', [-axes.forward[0], -axes.forward[1], -axes.forward[2]]],
    ['side', axes.side],
    ['side', [-axes.side[0], -axes.side[1], -axes.side[2]]],
  ]
  let best: Face = 'front', arg = -Infinity
  for (const [face, normal] of faces) {
    const d = dot(apply(m, normal), target)
    if (d > arg + 1e-9) (arg = d), (best = face)
  }
  return best
}

/**
 * A rotation in a rigger's words: which face leads (goes first through the opening) and, when tipped, which
 * face is down; "as it stands", "turned 90 degrees, a side leading", "tipped onto its back, top leading".
 * Faces are named as the object was scanned: its front is the face that led as it stood.
 */
export function describeOrientation(m: Mat3, axes: PassageAxes): string {
  const lead = faceTowards(m, axes, axes.forward)
  const down = faceTowards(m, axes, [-axes.up[0], -axes.up[1], -axes.up[2]])
  const leading = lead === 'side' ? 'a side leading' : `${lead} leading`
  const tip = Math.acos(Math.max(-1, Math.min(1, dot(apply(m, axes.up), axes.up)))) / DEG
  if (tip < 1) {
    // Upright: the turn about the vertical, from where the front now faces.
    const f = apply(m, axes.forward)
    const turn = Math.atan2(dot(f, axes.side), dot(f, axes.forward)) / DEG
    const a = Math.round(Math.abs(turn))
    if (a < 1) return 'as it stands'
    if (a === 180) return 'turned round, back leading'
    return `turned ${a} degrees, ${leading}`
  }
  if (tip > 179) return `upside down, ${leading}`
  const onto = down === 'side' ? 'a side' : `its ${down}`
  if (Math.abs(tip - 90) < 1) return down === 'side' ? `laid on a side, ${leading}` : `tipped onto ${onto}, ${leading}`
  return `tipped ${Math.round(tip)} degrees towards ${onto}, ${leading}`
}

/**
 * The search through one opening, as a check runs it: the margin of each orientation is the clearance fit
 * (clearance.ts `fitThrough`) at that orientation without an in-plane turn, resting on `restOn` when given;
 * the bound comes from the free region's extents plus the fit's grid resolution. `points`: the object's
 * support points about their centre (`supportPoints`), passage frame.
 */
export function searchPassage(opening: FreeOpening, points: Float64Array, up: Vec3, limits: OrientationLimits, restOn?: number): OrientationResult {
  const fitOptions = { maxTurnDegrees: 0, ...(restOn !== undefined ? { restOn } : {}) }
  const margin = (s: Float64Array) => {
    const f = fitThrough(opening, s, 0, 0, fitOptions)
    return f.ok ? f.margin : -Infinity
  }
  const e = opening.extents
  const pad = 2 * opening.radius + opening.grid.cell
  const bound = boxBound(e.uMax - e.uMin + pad, e.vMax - e.vMin + pad, restOn !== undefined, fitResolution(opening))
  return searchOrientations(points, up, limits, margin, bound)
}
