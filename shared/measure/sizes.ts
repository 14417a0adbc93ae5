import { fitPlane } from '../geometry/planeFit'
import { minimumAreaRectangle } from './calipers'
import { edgeWindow, fitSurface, type SurfaceFit } from './edges'
import { convexHull } from './polygon'
import { combineInQuadrature, COVERAGE_FACTOR, type UncertaintyPart } from './uncertainty'

/**
 * The sizes of an object: length, width and height of the oriented box of its points, each face taken as the
 * surface the points sample (never the extreme point, which lies about three noise sigmas out: edges.ts).
 *
 * Frame: the scene's, metres, Z up; the object stands upright as scanned, so the box's third axis is Z.
 * Method:
 * - Footprint: the points clear (by an inset) of the lowest kept points and of the top, projected on the floor
 *   plane; their minimum-area rectangle (calipers.ts: Freeman and Shapira 1975; Toussaint 1983) gives the
 *   box's turn. Over `fitPoints` (200 000) points, every k-th point is fitted.
 * - Side faces: each of the four is fitted, as edges.ts fits an edge, to the band of points beside it, in the
 *   footprint, between insets from the face's ends and from the top and bottom (so the top face and the floor
 *   never enter a side's band). The turn is then refined by the fitted faces' slopes and the faces fitted again.
 *   A face that bends (a drum's side) is fitted again over a short window at its outermost point and its
 *   support is that local fit's highest value: the size is then the diameter across it.
 * - Top: the band of points under the provisional top, inside the inset footprint, seen from the side.
 * - Bottom: the floor under the object when the points its trims took away near it (`around`) hold one: a
 *   least-squares plane (shared/geometry/planeFit.ts; Shakarji 1998, J. Res. NIST 103(6)) of those points
 *   below the object, trimmed at 3 s and refitted, evaluated under the box's centre. Else the object's own
 *   lowest face (its underside, when it was scanned), else its lowest point, with a note.
 * Uncertainty (GUM, JCGM 100:2008 section 5.1, eq. 10; U = k u, k = 2): a size is the difference of two face
 * offsets, so its parts are the two face fits (each s sqrt([(X^T X)^-1]_00), s at least the points' noise: the
 * point uncertainty enters here, averaged over the face's points, JCGM 100 section 4.2.3) and each member's
 * registration: a face fitted from several members moves by sum w_i e_i (w_i: the member's weight in the face's
 * least-squares fit, the sum of its points' entries in the first row of (X^T X)^-1 X^T; e_i its registration
 * error along the face's normal), so member i's part of a size is
 * |w_i(far face) - w_i(near face)| u_i, and a member that sees both faces cancels, as two anchors on one
 * placement do (README.md, "Registration terms"). The floor's points carry no member when their counts are not
 * given: then the floor's part is the largest member's registration u, taken independent of the top (the
 * larger, safe side). The floor's own fit: s^2 (1/m + d^T S^-1 d), the regression's variance of the plane's
 * height at the box's centre (d from the floor points' centroid, S their xy scatter; e.g. Draper and Smith
 * 1998, section 5.1).
 * Degenerate input: too few points, a flat or empty face, not finite numbers give { ok: false, reason }, never
 * NaN. The result is plain data (structured-cloneable: a compute task).
 */

export interface SizeMember {
  /** Shown in the parts' names ("registration (station B)"). */
  name: string
  /** Per-axis standard uncertainty of the member's registration, metres (0 for the reference). */
  registrationU: number
  /**
   * How many of `points` are this member's, in order (the members' points are concatenated). Left out (for
   * every member) when the points cannot be told apart by member: each face then carries the largest
   * member's registration, the faces taken independent (the larger, safe side).
   */
  count?: number
}

export interface SizeOptions {
  /** The points' noise (standard uncertainty along a surface's normal), metres. */
  sigma: number
  /** Point spacing, metres. */
  spacing: number
  members: SizeMember[]
  /** How many of `around` each member gave, in the members' order; unknown if left out. */
  aroundCounts?: number[]
  /** The most points the face fits take (default 200 000): a larger object is fitted on every stride-th point. */
  fitPoints?: number
}

export interface SizeValue {
  value: number
  /** Standard and expanded (k = 2) uncertainty, metres. */
  u: number
  U: number
  parts: UncertaintyPart[]
}

export interface ObjectSizes {
  ok: true
  length: SizeValue
  width: SizeValue
  height: SizeValue
  box: {
    /** Centre of the box, scene frame. */
    centre: [number, number, number]
    /** The length's direction, the width's direction (both level) and up (Z). */
    axes: [[number, number, number], [number, number, number], [number, number, number]]
    /** Length, width, height, metres. */
    size: [number, number, number]
  }
  floor: { found: boolean; plane: { point: [number, number, number]; normal: [number, number, number]; rms: number; count: number } | null }
  /** The points' outline seen from above (footprint) and from the side along the width (side), in the box's frame about its centre, u v pairs: for the figure (extreme points, not fitted). */
  footprint: number[]
  side: number[]
  objectPointCount: number
  /** Faces that bend (fitted locally at their outermost point): 'length', 'width' or 'top'. */
  curved: string[]
  notes: string[]
}

export type SizesResult = ObjectSizes | { ok: false; reason: 'too-few-points' | 'not-finite' | 'face-not-fitted' | 'members-mismatch'; detail: string }

/** The most points the face fits take (every stride-th point of a larger object). */
const FIT_POINTS = 200_000
/** Below this many points a size is not worth a fit. */
const MIN_POINTS = 30
/** How far below the object's lowest point a floor is looked for, metres. */
const FLOOR_REACH = 0.15
/** A floor tilted more than this from level is not the object's floor (degrees). */
const FLOOR_TILT = 10

interface Frame {
  cx: number
  cy: number
  /** Unit length direction (level); the width direction is (-ey, ex). */
  ex: number
  ey: number
}

interface FaceFit {
  /** The face's position along its outward normal, from the frame's centre, metres. */
  at: number
  u: number
  fit: SurfaceFit
  /** Slope of the face against the frame's axis (for the turn's refinement), 0 for a curved face. */
  slope: number
  curved: boolean
  /** Each member's share of the points fitted. */
  weights: number[]
}

/** Member index of every point (the members' points concatenated in order). */
function memberIndex(count: number, members: readonly SizeMember[]): Uint16Array {
  const out = new Uint16Array(count)
  let at = 0
  members.forEach((m, i) => {
    out.fill(i, at, Math.min(count, at + (m.count ?? 0)))
    at += m.count ?? 0
  })
  return out
}

/**
 * Fits one face in a 2D view (u v pairs, `who` the member of each pair): origin on the provisional face,
 * outward normal, window half-length `half`; a face that bends is fitted again over a short window at its
 * outermost point. Returns the face's support along the normal from the view's origin.
 */
function fitFace(
  uv: Float64Array,
  who: Uint16Array,
  memberCount: number,
  origin: [number, number],
  normal: [number, number],
  half: number,
  o: SizeOptions,
): FaceFit | null {
  const { sigma, spacing } = o
  const depth = 8 * sigma + 2 * spacing
  const band = (h: number) => ({ sigma, halfWindow: h, near: -(h + depth), far: spacing + 2 * sigma, start: -(6 * sigma + spacing / 2) })
  const f = fitSurface(uv, origin, normal, band(half))
  if (!f.ok) return null
  const local = edgeWindow(spacing, sigma)
  const bend = half > 1.5 * local ? bendOf(uv, origin, normal, half, half + depth) : null
  let fit = f, top = f.coef[0], curved = false
  let centre: [number, number] = origin
  // A bend well beyond the noise over the window: a curved face (a drum), not a flat one turned a little.
  if (bend && bend.c2 < 0 && -bend.c2 * half * half > Math.max(4 * sigma, 2 * spacing)) {
    const { c1, c2 } = bend
    const tv = Math.min(half, Math.max(-half, -c1 / (2 * c2)))
    const tx = -normal[1], ty = normal[0]
    centre = [origin[0] + tv * tx + (c1 * tv + c2 * tv * tv) * normal[0], origin[1] + tv * ty + (c1 * tv + c2 * tv * tv) * normal[1]]
    const g = fitSurface(uv, centre, normal, band(local))
    if (!g.ok) return null
    fit = g
    curved = true
    // The local fit's highest value over the points it fitted.
    const [g0, g1, g2] = g.coef
    const ts = [g.tRange[0], g.tRange[1]]
    if (g2 < 0) ts.push(Math.min(g.tRange[1], Math.max(g.tRange[0], -g1 / (2 * g2))))
    top = Math.max(...ts.map((t) => g0 + g1 * t + g2 * t * t))
  }
  // Each member's weight in the fitted offset: the fit is linear in the offsets d_j of the points it kept
  // (within 3 s of it over its window), a = sum h_j d_j with h the first row of (X^T X)^-1 X^T, so a shift e of
  // one member's points along the normal moves a by e times the sum of its h_j (these weights sum to 1; a member
  // at one end of a curved window can weigh more than its share of the points). Near the top of a curve the
  // fitted top moves as a does.
  const s = Math.max(sigma, fit.rms)
  const tx = -normal[1], ty = normal[0]
  const h = curved ? local : half
  const k = fit.coef[2] !== 0 ? 3 : fit.coef[1] !== 0 ? 2 : 1
  const kept: number[] = [], keptWho: number[] = []
  const XtX = [0, 0, 0, 0, 0, 0, 0, 0, 0]
  for (let i = 0; i < uv.length; i += 2) {
    const px = uv[i]! - centre[0], py = uv[i + 1]! - centre[1]
    const t = px * tx + py * ty
    if (t < -h || t > h) continue
    const d = px * normal[0] + py * normal[1]
    if (Math.abs(d - (fit.coef[0] + fit.coef[1] * t + fit.coef[2] * t * t)) > 3 * s) continue
    kept.push(t)
    keptWho.push(who[i >> 1]!)
    const row = [1, t, t * t]
    for (let r = 0; r < k; r++) for (let c = 0; c < k; c++) XtX[3 * r + c]! += row[r]! * row[c]!
  }
  const inv = firstRowOfInverse(XtX, k)
  const weights = new Array<number>(memberCount).fill(0)
  if (inv) for (let j = 0; j < kept.length; j++) weights[keptWho[j]!]! += inv[0]! + inv[1]! * kept[j]! + inv[2]! * kept[j]! * kept[j]!
  const along = (centre[0] - origin[0]) * normal[0] + (centre[1] - origin[1]) * normal[1]
  const base = origin[0] * normal[0] + origin[1] * normal[1]
  return {
    at: base + along + top,
    u: fit.u,
    fit,
    slope: curved ? 0 : fit.coef[1],
    curved,
    weights,
  }
}

/** The first row of the inverse of the symmetric k x k matrix in the top left of `m` (3 x 3, row-major), padded with zeros to 3; null if singular. */
function firstRowOfInverse(m: readonly number[], k: number): [number, number, number] | null {
  const a = (r: number, c: number) => m[3 * r + c]!
  if (k === 1) return a(0, 0) > 0 ? [1 / a(0, 0), 0, 0] : null
  if (k === 2) {
    const det = a(0, 0) * a(1, 1) - a(0, 1) * a(1, 0)
    return Math.abs(det) > 0 ? [a(1, 1) / det, -a(0, 1) / det, 0] : null
  }
  const c00 = a(1, 1) * a(2, 2) - a(1, 2) * a(2, 1)
  const c01 = a(1, 2) * a(2, 0) - a(1, 0) * a(2, 2)
  const c02 = a(1, 0) * a(2, 1) - a(1, 1) * a(2, 0)
  const det = a(0, 0) * c00 + a(0, 1) * c01 + a(0, 2) * c02
  // Symmetric: the first row of the inverse is the first column of cofactors over the determinant.
  return Math.abs(det) > 0 ? [c00 / det, c01 / det, c02 / det] : null
}

/**
 * How a face bends over its window: a quadratic d = c0 + c1 t + c2 t^2 through the outermost point of each of 8
 * slices along it (extreme points: each about as far out as the others, so the shape shows, not the offset).
 * Null with fewer than 4 slices holding points.
 */
function bendOf(uv: Float64Array, origin: readonly [number, number], normal: readonly [number, number], half: number, depth: number): { c1: number; c2: number } | null {
  const bins = 8, top = new Float64Array(bins).fill(-Infinity)
  const tx = -normal[1], ty = normal[0]
  for (let i = 0; i < uv.length; i += 2) {
    const px = uv[i]! - origin[0], py = uv[i + 1]! - origin[1]
    const t = px * tx + py * ty
    if (t < -half || t > half) continue
    const d = px * normal[0] + py * normal[1]
    if (d < -depth) continue
    const b = Math.min(bins - 1, Math.floor(((t + half) / (2 * half)) * bins))
    if (d > top[b]!) top[b] = d
  }
  // Normal equations of the quadratic over the slices' centres.
  const A = [0, 0, 0, 0, 0], b = [0, 0, 0]
  let used = 0
  for (let k = 0; k < bins; k++) {
    if (top[k] === -Infinity) continue
    const t = -half + ((k + 0.5) / bins) * 2 * half, d = top[k]!
    for (let p = 0; p < 5; p++) A[p]! += t ** p
    for (let p = 0; p < 3; p++) b[p]! += d * t ** p
    used++
  }
  if (used < 4) return null
  // Solve [[A0 A1 A2][A1 A2 A3][A2 A3 A4]] c = b by Cramer's rule (3x3, well scaled: t within the window).
  const m = [
    [A[0]!, A[1]!, A[2]!],
    [A[1]!, A[2]!, A[3]!],
    [A[2]!, A[3]!, A[4]!],
  ]
  const det3 = (q: number[][]) => q[0]![0]! * (q[1]![1]! * q[2]![2]! - q[1]![2]! * q[2]![1]!) - q[0]![1]! * (q[1]![0]! * q[2]![2]! - q[1]![2]! * q[2]![0]!) + q[0]![2]! * (q[1]![0]! * q[2]![1]! - q[1]![1]! * q[2]![0]!)
  const D = det3(m)
  if (!(Math.abs(D) > 0)) return null
  const col = (j: number) => m.map((row, i) => row.map((v, k) => (k === j ? b[i]! : v)))
  return { c1: det3(col(1)) / D, c2: det3(col(2)) / D }
}

/** The floor under the object: a plane fit of the `around` points just below its lowest kept point. */
function floorUnder(around: Float64Array, lowest: number, o: SizeOptions, outside: (x: number, y: number) => boolean) {
  const reach = FLOOR_REACH, above = 2 * o.sigma + o.spacing
  let pts: number[] = []
  for (let i = 0; i < around.length; i += 3) {
    const z = around[i + 2]!
    if (z <= lowest + above && z >= lowest - reach && outside(around[i]!, around[i + 1]!)) pts.push(i / 3)
  }
  if (pts.length < MIN_POINTS) return null
  let fit = null
  // Least squares, then again without the points beyond 3 s (a trolley's wheel, a step): at most four rounds.
  for (let round = 0; round < 4; round++) {
    const xyz = new Float64Array(3 * pts.length)
    pts.forEach((k, j) => xyz.set(around.subarray(3 * k, 3 * k + 3), 3 * j))
    fit = fitPlane(xyz)
    if (!fit) return null
    const s = Math.max(o.sigma, fit.rms)
    const [nx, ny, nz] = fit.normal, [cx, cy, cz] = fit.centroid
    const kept = pts.filter((k) => Math.abs((around[3 * k]! - cx) * nx + (around[3 * k + 1]! - cy) * ny + (around[3 * k + 2]! - cz) * nz) <= 3 * s)
    if (kept.length === pts.length || kept.length < MIN_POINTS) break
    pts = kept
  }
  if (!fit || (Math.acos(Math.min(1, fit.normal[2])) * 180) / Math.PI > FLOOR_TILT) return null
  return { fit, indices: pts }
}

export function measureSizes(points: Float64Array, around: Float64Array, o: SizeOptions): SizesResult {
  const n = Math.floor(points.length / 3)
  if (n < MIN_POINTS) return { ok: false, reason: 'too-few-points', detail: `the object has ${n} points; at least ${MIN_POINTS} are needed.` }
  if (!(Number.isFinite(o.sigma) && o.sigma >= 0 && Number.isFinite(o.spacing) && o.spacing > 0)) return { ok: false, reason: 'not-finite', detail: 'the point uncertainty or spacing is not a positive number.' }
  for (let i = 0; i < 3 * n; i++) if (!Number.isFinite(points[i]!)) return { ok: false, reason: 'not-finite', detail: `point ${Math.floor(i / 3) + 1} has a coordinate that is not a number.` }
  const attributed = o.members.every((m) => m.count !== undefined)
  const counted = o.members.reduce((k, m) => k + (m.count ?? 0), 0)
  if (o.members.length === 0 || (attributed && counted !== n)) return { ok: false, reason: 'members-mismatch', detail: `the members' point counts add up to ${counted}, not the ${n} points given.` }
  if (o.members.some((m) => !(Number.isFinite(m.registrationU) && m.registrationU >= 0))) return { ok: false, reason: 'members-mismatch', detail: "a member's registration u is not a non-negative number." }
  const worstU = Math.max(0, ...o.members.map((m) => m.registrationU))
  const who = memberIndex(n, o.members)
  const M = o.members.length
  const notes: string[] = []
  const inset = Math.max(0.02, 3 * o.spacing, 8 * o.sigma)

  let zMin = Infinity, zMax = -Infinity
  for (let i = 0; i < n; i++) (zMin = Math.min(zMin, points[3 * i + 2]!)), (zMax = Math.max(zMax, points[3 * i + 2]!))

  // The sides' band: clear of the top and of the lowest kept points (a floor cut's edge, the floor's strays).
  const zLo = zMin + inset, zHi = zMax - inset
  if (!(zHi - zLo > 2 * o.spacing)) return { ok: false, reason: 'face-not-fitted', detail: `the object is too low (${(zMax - zMin).toFixed(3)} m) to fit its sides clear of its top and bottom.` }
  // The sides' points (between the insets) and their members.
  // A large object is fitted on every stride-th point (the fits' u are those of the points used; past a few
  // hundred thousand points the registration terms dominate): a million-point object in about a second.
  const stride = Math.max(1, Math.ceil(n / (o.fitPoints ?? FIT_POINTS)))
  let sideCount = 0
  for (let i = 0; i < n; i += stride) if (points[3 * i + 2]! >= zLo && points[3 * i + 2]! <= zHi) sideCount++
  if (sideCount < MIN_POINTS) return { ok: false, reason: 'too-few-points', detail: 'too few points on the object\'s sides.' }
  const sideXy = new Float64Array(2 * sideCount), sideWho = new Uint16Array(sideCount)
  for (let i = 0, k = 0; i < n; i += stride) {
    if (points[3 * i + 2]! < zLo || points[3 * i + 2]! > zHi) continue
    sideXy[2 * k] = points[3 * i]!
    sideXy[2 * k + 1] = points[3 * i + 1]!
    sideWho[k++] = who[i]!
  }
  const rect = minimumAreaRectangle(sideXy)
  if (!rect.ok) return { ok: false, reason: 'face-not-fitted', detail: 'the object\'s footprint is a line or a point.' }
  const a0 = (rect.angleDegrees * Math.PI) / 180
  let frame: Frame = { cx: (rect.corners[0]! + rect.corners[4]!) / 2, cy: (rect.corners[1]! + rect.corners[5]!) / 2, ex: Math.cos(a0), ey: Math.sin(a0) }

  /** The sides' points in the frame (u along ex, v across), and the four faces fitted. */
  const sides = (f: Frame) => {
    const uv = new Float64Array(sideXy.length)
    let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
    for (let i = 0; i < sideXy.length; i += 2) {
      const x = sideXy[i]! - f.cx, y = sideXy[i + 1]! - f.cy
      const u = x * f.ex + y * f.ey, v = -x * f.ey + y * f.ex
      uv[i] = u
      uv[i + 1] = v
      ;(uMin = Math.min(uMin, u)), (uMax = Math.max(uMax, u)), (vMin = Math.min(vMin, v)), (vMax = Math.max(vMax, v))
    }
    const uMid = (uMin + uMax) / 2, vMid = (vMin + vMax) / 2
    const halfU = Math.max(o.spacing, (uMax - uMin) / 2 - inset), halfV = Math.max(o.spacing, (vMax - vMin) / 2 - inset)
    const faces = {
      uPlus: fitFace(uv, sideWho, M, [uMax, vMid], [1, 0], halfV, o),
      uMinus: fitFace(uv, sideWho, M, [uMin, vMid], [-1, 0], halfV, o),
      vPlus: fitFace(uv, sideWho, M, [uMid, vMax], [0, 1], halfU, o),
      vMinus: fitFace(uv, sideWho, M, [uMid, vMin], [0, -1], halfU, o),
    }
    return { uv, faces, extents: { uMin, uMax, vMin, vMax } }
  }

  let s = sides(frame)
  const missing = () => Object.entries(s.faces).find(([, f]) => !f)?.[0]
  if (missing()) return { ok: false, reason: 'face-not-fitted', detail: `a side of the object (${FACE_WORDS[missing()!]}) could not be fitted: too few points beside it.` }
  // The turn refined by the flat faces' slopes (each says the same turn: derived in the file's notes), once.
  {
    let sum = 0, weight = 0
    for (const f of Object.values(s.faces)) if (f && !f.curved) (sum += f.slope * f.fit.count), (weight += f.fit.count)
    if (weight > 0) {
      const da = -sum / weight
      const a = Math.atan2(frame.ey, frame.ex) + da
      frame = { ...frame, ex: Math.cos(a), ey: Math.sin(a) }
      s = sides(frame)
      if (missing()) return { ok: false, reason: 'face-not-fitted', detail: `a side of the object (${FACE_WORDS[missing()!]}) could not be fitted: too few points beside it.` }
    }
  }
  const F = s.faces as { [K in keyof typeof s.faces]: FaceFit }
  const uSize = F.uPlus.at + F.uMinus.at, vSize = F.vPlus.at + F.vMinus.at
  const uCentre = (F.uPlus.at - F.uMinus.at) / 2, vCentre = (F.vPlus.at - F.vMinus.at) / 2

  // Top and bottom, seen from the side along v: (u, z) of the points inside the inset footprint.
  const inU = (u: number) => u >= -F.uMinus.at + inset && u <= F.uPlus.at - inset
  const inV = (v: number) => v >= -F.vMinus.at + inset && v <= F.vPlus.at - inset
  const upXz: number[] = [], upWho: number[] = []
  for (let i = 0; i < n; i += stride) {
    const x = points[3 * i]! - frame.cx, y = points[3 * i + 1]! - frame.cy
    const u = x * frame.ex + y * frame.ey, v = -x * frame.ey + y * frame.ex
    if (!inU(u) || !inV(v)) continue
    upXz.push(u - uCentre, points[3 * i + 2]!)
    upWho.push(who[i]!)
  }
  const inner = Float64Array.from(upXz), innerWho = Uint16Array.from(upWho)
  const halfTop = Math.max(o.spacing, uSize / 2 - inset)
  const top = fitFace(inner, innerWho, M, [0, zMax], [0, 1], halfTop, o)
  if (!top) return { ok: false, reason: 'face-not-fitted', detail: 'the top of the object could not be fitted: too few points on it (was it scanned from above?).' }

  // Bottom: the floor under the box's centre, else the underside, else the lowest point. The floor's points
  // are taken outside the footprint grown by the inset: the strip of the sides a floor cut took away stays out.
  const centreX = frame.cx + uCentre * frame.ex - vCentre * frame.ey
  const centreY = frame.cy + uCentre * frame.ey + vCentre * frame.ex
  const outside = (x: number, y: number) => {
    const dx = x - centreX, dy = y - centreY
    return Math.abs(dx * frame.ex + dy * frame.ey) > uSize / 2 + inset || Math.abs(-dx * frame.ey + dy * frame.ex) > vSize / 2 + inset
  }
  const floor = floorUnder(around, zMin, o, outside)
  let bottomAt: number, bottomParts: UncertaintyPart[], bottomWeights: number[] | null = null
  let floorOut: ObjectSizes['floor'] = { found: false, plane: null }
  if (floor) {
    const { fit, indices } = floor
    const [nx, ny, nz] = fit.normal, [px, py, pz] = fit.centroid
    bottomAt = pz - (nx * (centreX - px) + ny * (centreY - py)) / nz
    // Variance of the plane's height at the centre: s^2 (1/m + d^T S^-1 d).
    let sxx = 0, sxy = 0, syy = 0
    for (const k of indices) {
      const dx = around[3 * k]! - px, dy = around[3 * k + 1]! - py
      ;(sxx += dx * dx), (sxy += dx * dy), (syy += dy * dy)
    }
    const det = sxx * syy - sxy * sxy, dx = centreX - px, dy = centreY - py
    const lever = det > 0 ? (syy * dx * dx - 2 * sxy * dx * dy + sxx * dy * dy) / det : 0
    const sFloor = Math.max(o.sigma, fit.rms)
    bottomParts = [{ name: 'floor fit', u: sFloor * Math.sqrt(1 / indices.length + lever) }]
    if (attributed && o.aroundCounts && o.aroundCounts.length === M && o.aroundCounts.reduce((a, b) => a + b, 0) === around.length / 3) {
      const aroundWho = memberIndex(around.length / 3, o.members.map((m, i) => ({ ...m, count: o.aroundCounts![i]! })))
      const counts = new Array<number>(M).fill(0)
      for (const k of indices) counts[aroundWho[k]!]!++
      bottomWeights = counts.map((c) => c / indices.length)
    } else if (attributed && worstU > 0) bottomParts.push({ name: 'registration (floor, any member)', u: worstU })
    floorOut = { found: true, plane: { point: fit.centroid.map(r6) as [number, number, number], normal: fit.normal.map(r6) as [number, number, number], rms: fit.rms, count: indices.length } }
  } else {
    const under = fitFace(inner, innerWho, M, [0, zMin], [0, -1], halfTop, o)
    if (under && under.fit.count >= MIN_POINTS) {
      bottomAt = -under.at
      bottomParts = [{ name: 'underside fit', u: under.u }]
      bottomWeights = under.weights
      notes.push('No floor was found under the object: its height is measured from its own underside.')
    } else {
      bottomAt = zMin
      // The lowest point lies up to about three sigmas below the surface it samples (edges.ts): a rectangular
      // half-width of 3 sigma, plus what a trim may have cut off is not known.
      bottomParts = [{ name: 'bottom at the lowest point', u: (3 * o.sigma) / Math.sqrt(3) }]
      if (attributed && worstU > 0) bottomParts.push({ name: 'registration (lowest point, any member)', u: worstU })
      notes.push('No floor was found under the object and its underside has no points: its height is measured from its lowest kept point, which a trim (a floor cut) may have raised.')
    }
  }

  const regParts = (a: readonly number[], b: readonly number[] | null): UncertaintyPart[] =>
    !attributed
      ? worstU > 0 ? [{ name: 'registration (members not told apart)', u: (b ? Math.SQRT2 : 1) * worstU }] : []
      : o.members.flatMap((m, i) => {
      const w = Math.abs((a[i] ?? 0) - (b ? (b[i] ?? 0) : 0))
      return m.registrationU > 0 && w > 0 ? [{ name: `registration (${m.name})`, u: w * m.registrationU }] : []
    })
  const sizeOf = (value: number, parts: UncertaintyPart[]): SizeValue | null => {
    const b = combineInQuadrature(parts)
    return b.ok && Number.isFinite(value) ? { value, u: b.total, U: COVERAGE_FACTOR * b.total, parts: b.parts } : null
  }
  const uValue = sizeOf(uSize, [{ name: 'face fits', u: Math.hypot(F.uPlus.u, F.uMinus.u) }, ...regParts(F.uPlus.weights, F.uMinus.weights)])
  const vValue = sizeOf(vSize, [{ name: 'face fits', u: Math.hypot(F.vPlus.u, F.vMinus.u) }, ...regParts(F.vPlus.weights, F.vMinus.weights)])
  // Unattributed points: the top and the bottom each carry the largest registration, independent (regParts' sqrt 2).
  const topWithBottom = regParts(top.weights, bottomWeights ?? (attributed ? null : []))
  const height = sizeOf(top.at - bottomAt, [{ name: 'top fit', u: top.u }, ...bottomParts, ...topWithBottom])
  if (!uValue || !vValue || !height) return { ok: false, reason: 'not-finite', detail: 'a size or its uncertainty is not a number.' }

  // Length along the longer side.
  const swap = vSize > uSize
  const e1: [number, number, number] = swap ? [-frame.ey, frame.ex, 0] : [frame.ex, frame.ey, 0]
  const e2: [number, number, number] = swap ? [-frame.ex, -frame.ey, 0] : [-frame.ey, frame.ex, 0]
  const length = swap ? vValue : uValue, width = swap ? uValue : vValue
  const curved = [
    ...(F.uPlus.curved || F.uMinus.curved ? [swap ? 'width' : 'length'] : []),
    ...(F.vPlus.curved || F.vMinus.curved ? [swap ? 'length' : 'width'] : []),
    ...(top.curved ? ['top'] : []),
  ]
  if (curved.includes('length') || curved.includes('width')) notes.push('A side bends (a round or curved object): its size is taken across the outermost points of the fitted curve, a diameter for a drum.')
  const zMid = (top.at + bottomAt) / 2
  const centre: [number, number, number] = [centreX, centreY, zMid]

  // The figure's outlines (extreme points), in the box's frame about its centre.
  const foot = new Float64Array(sideXy.length)
  for (let i = 0; i < sideXy.length; i += 2) {
    const x = sideXy[i]! - centreX, y = sideXy[i + 1]! - centreY
    foot[i] = x * e1[0] + y * e1[1]
    foot[i + 1] = x * e2[0] + y * e2[1]
  }
  const sideView = new Float64Array(2 * Math.ceil(n / stride))
  for (let i = 0, k = 0; i < n; i += stride, k += 2) {
    const x = points[3 * i]! - centreX, y = points[3 * i + 1]! - centreY
    sideView[k] = x * e1[0] + y * e1[1]
    sideView[k + 1] = points[3 * i + 2]! - zMid
  }
  return {
    ok: true,
    length,
    width,
    height,
    box: { centre: centre.map(r6) as [number, number, number], axes: [e1.map(r9) as [number, number, number], e2.map(r9) as [number, number, number], [0, 0, 1]], size: [length.value, width.value, height.value] },
    floor: floorOut,
    footprint: ringOf(foot),
    side: ringOf(sideView),
    objectPointCount: n,
    curved,
    notes,
  }
}

const FACE_WORDS: Record<string, string> = { uPlus: 'one end', uMinus: 'the other end', vPlus: 'one side', vMinus: 'the other side' }
const r6 = (x: number) => Math.round(x * 1e6) / 1e6 + 0
const r9 = (x: number) => Math.round(x * 1e9) / 1e9 + 0

/** A hull ring, rounded to 0.1 mm, at most 64 corners (every k-th). */
function ringOf(xy: Float64Array): number[] {
  const h = convexHull(xy)
  if (!h.ok) return []
  const m = h.xy.length >> 1, step = Math.max(1, Math.ceil(m / 64))
  const out: number[] = []
  for (let i = 0; i < m; i += step) out.push(Math.round(h.xy[2 * i]! * 1e4) / 1e4, Math.round(h.xy[2 * i + 1]! * 1e4) / 1e4)
  return out
}
