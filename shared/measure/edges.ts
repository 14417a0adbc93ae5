import type { FreeOpening } from './opening'
import { convexHull } from './polygon'

/**
 * Edges as the surface the points sample, not as the extreme point.
 *
 * Why: the innermost of n points scattered with standard deviation sigma about an edge lies about
 * sigma sqrt(2 ln n) inside it (expected maximum of n normal deviates: Cramer 1946, Mathematical Methods of
 * Statistics, section 28.6; for n of a few hundred about 3 sigma). An opening read at its innermost points,
 * or an object at its outermost ones, is biased by that much per edge whatever its uncertainty says.
 *
 * Method: a local least-squares fit of the boundary band (the points within a few sigma and a window of
 * the provisional, extreme edge), in the edge's own frame: d = a + b t + c t^2 with d the offset along the
 * edge's normal and t along the edge; the edge is a (the fit at t = 0). A quadratic, fitted locally over a
 * window of half-length `halfWindow`, follows curved edges (an arched head, a drum's outline) as well as
 * straight ones. Outliers are trimmed at 3 s about the fit and the fit repeated (symmetric trimming keeps a
 * symmetric noise unbiased), s = max(sigma, residual RMS) with sigma the points' known noise.
 * Standard uncertainty of a: s sqrt([(X^T X)^-1]_00) (ordinary least squares, e.g. Draper and Smith 1998,
 * Applied Regression Analysis, 3rd ed., section 2.4 / 5.1; for a plain mean it is s / sqrt(m), JCGM 100
 * section 4.2.3).
 *
 * Limits: the band must hold only the surface that bounds the edge; points of another surface within a few
 * sigma of it (an end cap just inside a drum's outline, a door stop) pull the fit towards them. Sharp
 * corners are not fitted: a direction without a smooth face keeps the half-plane through its extreme point
 * (the larger, safe side, and never outside the points' own hull).
 * Units: metres, 2D section frame (u, v).
 */

export interface SurfaceFit {
  ok: true
  /** Offset of the surface along the normal from the origin, metres. */
  offset: number
  /** Standard uncertainty of `offset`, metres. */
  u: number
  count: number
  rms: number
  /** Fraction of the window's two halves that hold points (smallest of the two), 0..1. */
  cover: number
  /** The fitted curve d = a + b t + c t^2 (a = offset) and the t range of the fitted points. */
  coef: [number, number, number]
  tRange: [number, number]
}

export type SurfaceFitResult = SurfaceFit | { ok: false; reason: 'too-few-points' }

export interface BandOptions {
  /** The points' noise (standard deviation along the surface normal), metres; 0 if unknown. */
  sigma: number
  /** Half-length of the fitted window along the edge, metres. */
  halfWindow: number
  /** Band: points with d in [near, far] (d along the normal from the origin) are fitted. */
  near: number
  far: number
  /**
   * First pass only: points with d >= start (default: near). Later passes keep the points within 3 s of
   * the fit, with s the known sigma (the residual RMS if sigma is 0), so a surface just inside the band
   * (an object's other faces seen end-on) drops out once the first fit has found the outer one.
   */
  start?: number
}

/** Solves the small symmetric system A x = b (Gauss-Jordan with partial pivoting); null if singular. */
function solve(A: number[][], b: number[]): { x: number[]; inv00: number } | null {
  const n = b.length
  const M = A.map((row, i) => [...row, b[i]!, ...Array.from({ length: n }, (_, j) => (i === j ? 1 : 0))])
  for (let c = 0; c < n; c++) {
    let p = c
    for (let r = c + 1; r < n; r++) if (Math.abs(M[r]![c]!) > Math.abs(M[p]![c]!)) p = r
    if (Math.abs(M[p]![c]!) < 1e-300) return null
    ;[M[c], M[p]] = [M[p]!, M[c]!]
    const piv = M[c]![c]!
    for (let k = 0; k < M[c]!.length; k++) M[c]![k]! /= piv
    for (let r = 0; r < n; r++) {
      if (r === c) continue
      const f = M[r]![c]!
      if (f !== 0) for (let k = 0; k < M[r]!.length; k++) M[r]![k]! -= f * M[c]![k]!
    }
  }
  return { x: M.map((row) => row[n]!), inv00: M[0]![n + 1]! }
}

/**
 * Fits the surface bounding a band of points: origin and unit normal (pointing into the material) in the
 * section frame; the points with |t| <= halfWindow and near <= d <= far are fitted (see the header).
 */
export function fitSurface(xy: Float64Array, origin: readonly [number, number], normal: readonly [number, number], o: BandOptions): SurfaceFitResult {
  const [nx, ny] = normal, tx = -ny, ty = nx
  const ts: number[] = [], ds: number[] = []
  for (let i = 0; i < xy.length; i += 2) {
    const px = xy[i]! - origin[0], py = xy[i + 1]! - origin[1]
    const t = px * tx + py * ty
    if (t < -o.halfWindow || t > o.halfWindow) continue
    const d = px * nx + py * ny
    if (d < o.near || d > o.far) continue
    ts.push(t)
    ds.push(d)
  }
  const start = o.start ?? o.near
  let keep = ds.map((d) => d >= start)
  let result: SurfaceFit | null = null
  for (let iter = 0; iter < 6; iter++) {
    let m = 0, tMin = Infinity, tMax = -Infinity
    for (let i = 0; i < ts.length; i++) if (keep[i]) (m++, (tMin = Math.min(tMin, ts[i]!)), (tMax = Math.max(tMax, ts[i]!)))
    if (m < 3) return result ?? { ok: false, reason: 'too-few-points' }
    // Degree: quadratic with enough points spread along the edge, else a line, else a mean.
    const spread = (tMax - tMin) / (2 * o.halfWindow)
    const deg = m >= 12 && spread > 0.5 ? 2 : m >= 6 && spread > 0.2 ? 1 : 0
    const k = deg + 1
    const A = Array.from({ length: k }, () => new Array<number>(k).fill(0)), b = new Array<number>(k).fill(0)
    for (let i = 0; i < ts.length; i++) {
      if (!keep[i]) continue
      const row = [1, ts[i]!, ts[i]! * ts[i]!].slice(0, k)
      for (let r = 0; r < k; r++) {
        b[r]! += row[r]! * ds[i]!
        for (let c = 0; c < k; c++) A[r]![c]! += row[r]! * row[c]!
      }
    }
    const sol = solve(A, b)
    if (!sol) return result ?? { ok: false, reason: 'too-few-points' }
    const coef = [...sol.x, 0, 0]
    let ss = 0
    const res = ts.map((t, i) => ds[i]! - (coef[0]! + coef[1]! * t + coef[2]! * t * t))
    for (let i = 0; i < ts.length; i++) if (keep[i]) ss += res[i]! ** 2
    const rms = Math.sqrt(ss / Math.max(1, m - k))
    const s = Math.max(o.sigma, rms)
    const trim = 3 * (o.sigma > 0 ? o.sigma : rms)
    let left = 0, right = 0
    const half = o.halfWindow
    const bins = new Uint8Array(8)
    for (let i = 0; i < ts.length; i++) if (keep[i]) bins[Math.min(7, Math.max(0, Math.floor(((ts[i]! + half) / (2 * half)) * 8)))] = 1
    for (let q = 0; q < 4; q++) (left += bins[q]!), (right += bins[q + 4]!)
    let kLo = Infinity, kHi = -Infinity
    for (let i = 0; i < ts.length; i++) if (keep[i]) (kLo = Math.min(kLo, ts[i]!)), (kHi = Math.max(kHi, ts[i]!))
    result = {
      ok: true,
      offset: coef[0]!,
      u: s * Math.sqrt(Math.max(0, sol.inv00)),
      count: m,
      rms,
      cover: Math.min(left, right) / 4,
      coef: [coef[0]!, coef[1]!, coef[2]!],
      tRange: [kLo, kHi],
    }
    const next = res.map((r) => Math.abs(r) <= trim)
    if (next.every((v, i) => v === keep[i])) break
    keep = next
  }
  return result ?? { ok: false, reason: 'too-few-points' }
}

/** Half-window of an edge fit: at least 5 spacings and 8 sigma, 5 cm by default (metres). */
export function edgeWindow(spacing: number, sigma: number): number {
  return Math.max(0.05, 5 * spacing, 8 * sigma)
}

export interface OpeningEdges {
  ok: true
  /** Surface to surface, at the opening's clear-width row / clear-height column (opening.ts). */
  clearWidth: number
  clearHeight: number
  /** Standard uncertainty of each from the two edge fits, metres. */
  uWidth: number
  uHeight: number
  /** The fitted edges: left and right u at the width's row, bottom and top v at the height's column. */
  edges: { left: number; right: number; bottom: number; top: number }
}

/** The run of region cells through cell (i, j) along a row (du = 1) or column (du = 0). */
function runThrough(o: FreeOpening, i: number, j: number, alongU: boolean): [number, number] | null {
  const { nu, nv } = o.grid
  const at = (a: number) => (alongU ? a + j * nu : i + a * nu)
  const len = alongU ? nu : nv
  let c = alongU ? i : j
  if (!o.region[at(c)]) {
    // The row's longest run, as opening.ts measures it.
    let best: [number, number] | null = null, start = -1
    for (let a = 0; a <= len; a++) {
      const inside = a < len && o.region[at(a)]
      if (inside && start < 0) start = a
      if (!inside && start >= 0) {
        if (!best || a - 1 - start > best[1] - best[0]) best = [start, a - 1]
        start = -1
      }
    }
    return best
  }
  let lo = c, hi = c
  while (lo > 0 && o.region[at(lo - 1)]) lo--
  while (hi < len - 1 && o.region[at(hi + 1)]) hi++
  c = 0
  return [lo, hi]
}

/**
 * The clear width and height of a free opening (opening.ts) with each edge fitted to the points beside it,
 * at the row and column opening.ts found narrowest. sigma: the points' noise, metres.
 */
export function fittedOpening(o: FreeOpening, sigma: number): OpeningEdges | { ok: false; reason: 'edge-not-fitted'; edge: string } {
  const { u0, v0, cell } = o.grid
  const h = edgeWindow(o.spacing, sigma)
  const inward = o.radius + cell + 4 * sigma
  const band = { sigma, halfWindow: h, near: -inward - h, far: h + 8 * sigma + 2 * o.spacing }
  const j = Math.floor((o.clearWidthAtV - v0) / cell), iMid = Math.floor((o.clearHeightAtU - u0) / cell)
  const row = runThrough(o, Math.round((o.extents.uMin + o.extents.uMax) / 2 / cell - u0 / cell), j, true)
  const col = runThrough(o, iMid, Math.round((o.extents.vMin + o.extents.vMax) / 2 / cell - v0 / cell), false)
  if (!row || !col) return { ok: false, reason: 'edge-not-fitted', edge: 'opening' }
  const vRow = o.clearWidthAtV, uCol = o.clearHeightAtU
  // Provisional edges: the region's cell edges moved out by the growth radius (about the extreme point).
  const uL = u0 + row[0] * cell - o.radius, uR = u0 + (row[1] + 1) * cell + o.radius
  const vB = v0 + col[0] * cell - o.radius, vT = v0 + (col[1] + 1) * cell + o.radius
  const left = fitSurface(o.points, [uL, vRow], [-1, 0], band)
  const right = fitSurface(o.points, [uR, vRow], [1, 0], band)
  const bottom = fitSurface(o.points, [uCol, vB], [0, -1], band)
  const top = fitSurface(o.points, [uCol, vT], [0, 1], band)
  const named = { left, right, bottom, top }
  // A fitted surface lies beyond the innermost point by a few sigma (the extreme's own offset), give or
  // take a cell: a fit outside that range found another surface in its band (a sill, a frame's stop, a
  // streak of stray points), and the edge is not taken from it.
  for (const [edge, f] of Object.entries(named)) {
    if (!f.ok) return { ok: false, reason: 'edge-not-fitted', edge }
    const s = Math.max(sigma, f.rms)
    if (f.offset < -(o.radius + 2 * cell) || f.offset > 5 * s + 2 * cell) return { ok: false, reason: 'edge-not-fitted', edge }
  }
  const L = left as SurfaceFit, R = right as SurfaceFit, B = bottom as SurfaceFit, T = top as SurfaceFit
  const eL = uL - L.offset, eR = uR + R.offset, eB = vB - B.offset, eT = vT + T.offset
  return {
    ok: true,
    clearWidth: eR - eL,
    clearHeight: eT - eB,
    uWidth: Math.hypot(L.u, R.u),
    uHeight: Math.hypot(B.u, T.u),
    edges: { left: eL, right: eR, bottom: eB, top: eT },
  }
}

export interface FittedOutline {
  ok: true
  /** Anticlockwise convex ring of the fitted outline, metres. */
  xy: Float64Array
  /** Largest standard uncertainty of a fitted face (the outline's edge term), metres. */
  u: number
  /** Directions whose face was fitted (the rest kept their extreme point). */
  fitted: number
  directions: number
}

/**
 * An object's silhouette (u v points, any order) as the intersection of the half-planes of its fitted
 * support: in each of `directions` directions the band of points near the extreme one is fitted (see the
 * header) and the fitted curve's largest offset is the support; a band that does not fit one smooth surface
 * (a corner: two faces in the window) gives the half-plane through the extreme point.
 */
export function fittedOutline(xy: Float64Array, sigma: number, spacing: number, directions = 72): FittedOutline | { ok: false; reason: 'degenerate-silhouette' } {
  const hull = convexHull(xy)
  if (!hull.ok) return { ok: false, reason: 'degenerate-silhouette' }
  const h = edgeWindow(spacing, sigma)
  const hx = hull.xy
  const dirs: number[] = [], supports: number[] = []
  let uMax = 0, fitted = 0
  for (let k = 0; k < directions; k++) {
    const a = (2 * Math.PI * k) / directions, nx = Math.cos(a), ny = Math.sin(a)
    let best = -Infinity, bi = 0
    for (let i = 0; i < hx.length; i += 2) {
      const d = hx[i]! * nx + hx[i + 1]! * ny
      if (d > best) (best = d), (bi = i)
    }
    // The window's centre: the extreme point, moved along the edge so the window lies within the band's
    // points where it can (a flat face's extreme point may lie at its end).
    const tx = -ny, ty = nx, depth = 8 * sigma + 2 * spacing
    let tLo = Infinity, tHi = -Infinity
    for (let i = 0; i < xy.length; i += 2) {
      const x = xy[i]!, y = xy[i + 1]!
      if (x * nx + y * ny < best - depth) continue
      const t = x * tx + y * ty
      if (t < tLo) tLo = t
      if (t > tHi) tHi = t
    }
    let t0 = hx[bi]! * tx + hx[bi + 1]! * ty
    if (tHi - tLo >= 2 * h) t0 = Math.min(Math.max(t0, tLo + h), tHi - h)
    const f = fitSurface(xy, [best * nx + t0 * tx, best * ny + t0 * ty], [nx, ny], { sigma, halfWindow: h, near: -(h + depth), far: spacing, start: -(6 * sigma + spacing / 2) })
    // A smooth face: points on both sides of the window's centre, residuals like the noise. Its fitted
    // curve, sampled over the fitted points' range, joins the outline; otherwise the extreme point does.
    // A corner (two faces meeting in the window) fits badly: a large residual or a large bend.
    const smooth = f.ok && f.cover >= 0.75 && f.rms <= 1.5 * Math.max(sigma, spacing / 4) && f.offset <= 0 && f.offset >= -depth && Math.abs(f.coef[2]) * h * h <= Math.max(4 * sigma, 2 * spacing)
    if (f.ok && smooth) {
      // The fitted curve's support: its largest d over the fitted points' range.
      const [c0, c1, c2] = f.coef
      let top = -Infinity
      const tv = [f.tRange[0], f.tRange[1]]
      if (c2 < 0) tv.push(Math.min(f.tRange[1], Math.max(f.tRange[0], -c1 / (2 * c2))))
      for (const t of tv) top = Math.max(top, c0 + c1 * t + c2 * t * t)
      dirs.push(a)
      supports.push(best + top)
      uMax = Math.max(uMax, f.u)
      fitted++
    } else {
      // No smooth face here (a corner, a partly scanned side): the extreme point's half-plane, which never
      // cuts the object and keeps the outline within the points' own hull.
      dirs.push(a)
      supports.push(best)
    }
  }
  // The outline: the intersection of the fitted half-planes n . p <= support (the crossings of any two
  // lines that lie inside all). A gap of 180 degrees or more between fitted directions leaves it
  // open: then, and with fewer than 3 fitted directions, the points' own hull (the larger, safe side).
  let gapOk = dirs.length >= 3
  for (let i = 0; i < dirs.length && gapOk; i++) {
    const next = i + 1 < dirs.length ? dirs[i + 1]! : dirs[0]! + 2 * Math.PI
    if (next - dirs[i]! >= Math.PI - 1e-9) gapOk = false
  }
  if (!gapOk) return { ok: true, xy: hull.xy, u: uMax, fitted, directions }
  const pts: number[] = []
  for (let i = 0; i < dirs.length; i++) {
    for (let j = i + 1; j < dirs.length; j++) {
    const c1 = Math.cos(dirs[i]!), s1 = Math.sin(dirs[i]!), c2 = Math.cos(dirs[j]!), s2 = Math.sin(dirs[j]!)
    const det = c1 * s2 - s1 * c2
    if (Math.abs(det) < 1e-9) continue
    const x = (supports[i]! * s2 - s1 * supports[j]!) / det, y = (c1 * supports[j]! - supports[i]! * c2) / det
    let inside = true
    for (let q = 0; q < dirs.length && inside; q++) if (x * Math.cos(dirs[q]!) + y * Math.sin(dirs[q]!) > supports[q]! + 1e-7) inside = false
    if (inside) pts.push(x, y)
    }
  }
  const ring = convexHull(Float64Array.from(pts))
  if (!ring.ok) return { ok: false, reason: 'degenerate-silhouette' }
  return { ok: true, xy: ring.xy, u: uMax, fitted, directions }
}

export interface FittedMargin {
  ok: true
  /** Smallest distance from the placed outline to the fitted opening surfaces, metres. */
  margin: number
  /** Standard uncertainty of the opening side's fit at the binding contact, metres. */
  u: number
  contacts: number
}

/**
 * The margin of a placed outline (an anticlockwise ring in the section frame) to the opening's surfaces:
 * for the outline's samples nearest the section points (within `nearWithin` of the closest), the opening's
 * surface is fitted across the gap (see the header) and the smallest gap is the margin.
 */
export function fittedMargin(o: FreeOpening, placed: Float64Array, sigma: number, maxContacts = 24, options: { keepHeight?: boolean } = {}): FittedMargin | { ok: false; reason: 'no-contact' } {
  const cell = o.grid.cell, pts = o.points, np = pts.length >> 1
  const samples: number[] = []
  const n = placed.length >> 1
  for (let i = 0; i < n; i++) {
    const j = (i + 1) % n
    const ax = placed[2 * i]!, ay = placed[2 * i + 1]!, bx = placed[2 * j]!, by = placed[2 * j + 1]!
    const parts = Math.max(1, Math.ceil(Math.hypot(bx - ax, by - ay) / cell))
    for (let k = 0; k < parts; k++) samples.push(ax + ((bx - ax) * k) / parts, ay + ((by - ay) * k) / parts)
  }
  const near: { s: number; q: number; d: number }[] = []
  for (let s = 0; s < samples.length; s += 2) {
    let best = Infinity, bq = 0
    for (let p = 0; p < np; p++) {
      const d2 = (pts[2 * p]! - samples[s]!) ** 2 + (pts[2 * p + 1]! - samples[s + 1]!) ** 2
      if (d2 < best) (best = d2), (bq = p)
    }
    near.push({ s, q: bq, d: Math.sqrt(best) })
  }
  if (near.length === 0) return { ok: false, reason: 'no-contact' }
  let closest = Infinity
  for (const c of near) closest = Math.min(closest, c.d)
  const h = edgeWindow(o.spacing, sigma)
  // Contacts: every sample within a few sigma of the closest, spread round the outline (ring order).
  const reach = 8 * sigma + 2 * cell
  const candidates = near.filter((c) => c.d <= closest + reach && c.d > 0)
  const stride = Math.max(1, Math.ceil(candidates.length / maxContacts))
  const found: { gap: number; nx: number; ny: number; u: number }[] = []
  for (let i = 0; i < candidates.length; i += stride) {
    const c = candidates[i]!
    const sx = samples[c.s]!, sy = samples[c.s + 1]!
    const nx = (pts[2 * c.q]! - sx) / c.d, ny = (pts[2 * c.q + 1]! - sy) / c.d
    const f = fitSurface(pts, [sx, sy], [nx, ny], { sigma, halfWindow: h, near: c.d - (o.spacing + 4 * sigma), far: c.d + 8 * sigma + 2 * o.spacing })
    // Only a smooth surface across the window (not a corner of the opening): as for an outline.
    // and beyond the nearest point by a few sigma at most (as for an opening's edges, fittedOpening).
    const beyond = f.ok ? f.offset - c.d : NaN
    if (f.ok && f.cover >= 0.75 && f.rms <= 1.5 * Math.max(sigma, o.spacing / 4) && Math.abs(f.coef[2]) * h * h <= Math.max(4 * sigma, 2 * o.spacing) && beyond >= -(o.spacing + 2 * cell) && beyond <= 5 * Math.max(sigma, f.rms) + 2 * cell)
      found.push({ gap: f.offset, nx, ny, u: f.u })
  }
  if (found.length === 0) return { ok: false, reason: 'no-contact' }
  // The placement was best for the extreme points; re-balance it for the fitted surfaces: a small
  // translation delta changes each gap to gap - n . delta; the best delta maximises the smallest gap
  // (grid search within the band's reach).
  // Grid search, then twice again on a grid 20 times finer round the best (the step ends at reach / 8000).
  let margin = -Infinity, u = 0, cx = 0, cy = 0
  const steps = 20
  for (let level = 0, span = reach; level < 3; level++, span /= 20) {
    const ox = cx, oy = cy
    for (let a = -steps; a <= steps; a++) {
      // Resting on a level (keepHeight): the object may only slide across, not up or down.
      for (let b = options.keepHeight ? 0 : -steps; b <= (options.keepHeight ? 0 : steps); b++) {
        const dx = ox + (a / steps) * span, dy = oy + (b / steps) * span
        let low = Infinity, lu = 0
        for (const f of found) {
          const g = f.gap - (f.nx * dx + f.ny * dy)
          if (g < low) (low = g), (lu = f.u)
        }
        if (low > margin) (margin = low), (u = lu), (cx = dx), (cy = dy)
      }
    }
  }
  return { ok: true, margin, u, contacts: found.length }
}

/**
 * The edge-estimation parts of a margin's budget. The margin is the smallest gap between the object's
 * fitted outline and the opening's fitted surfaces, after the object is balanced between the contacts that
 * hold it (usually two opposite sides): each side's gap carries its opening fit and its outline fit, and
 * which side binds depends on both. Both sides' fits are counted (u of one fit times sqrt(2) for each),
 * the conservative reading of GUM 5.1 for a minimum of two gaps of which either can bind (derived; its
 * coverage is checked by simulation in tests/unit/measure/edgesCoverage.test.ts).
 */
export function marginEdgeParts(margin: FittedMargin, outline: FittedOutline): { name: string; u: number }[] {
  return [
    { name: 'opening edge fits', u: Math.SQRT2 * margin.u },
    { name: 'object outline fits', u: Math.SQRT2 * outline.u },
  ]
}
