import { squaredDistanceTransform } from './grid'
import { convexHull, signedArea } from './polygon'
import type { FreeOpening } from './opening'

/**
 * Fit of an object's silhouette through a free opening (opening.ts), with the guard-band decision of JCGM 106:2012 (README.md here).
 *
 * Units and frame: metres and degrees, the section's 2D frame (u to the right, v up for a wall plane). The
 * silhouette is the object projected along the direction of travel, given as u v points in the same frame
 * (any order). Its convex hull is used (conservative: the hull contains the object's outline).
 *
 * Method:
 * 1. Signed distance field of the free region on its grid: exact Euclidean distance transform
 *    (Felzenszwalb and Huttenlocher 2012, Theory of Computing 8, published; grid.ts) from each region cell
 *    centre to the nearest non-region cell centre, minus half a cell, and minus (distance to the nearest
 *    region cell centre, minus half a cell) outside the region: phi is about the distance to the region's
 *    cell edge, positive inside.
 * 2. The hull boundary is sampled at about one cell, about its area centroid. For each in-plane rotation
 *    theta, the samples are rotated and rounded to whole-cell offsets, and every region cell centre is tried
 *    as the centroid's translation t (the centroid of a convex silhouette that fits lies in the region);
 *    the best t maximises min over samples s of phi(t + R s). The search keeps the best value over all
 *    rotations so far and abandons a translation as soon as one sample falls below it (exact branch and
 *    bound, not a heuristic).
 * 3. Rotations: 0 to rangeDegrees (default 180, which covers every orientation of a centrally symmetric
 *    silhouette such as a box or disc; use 360 otherwise) in coarse steps (default 5 degrees), then fine
 *    steps (default 0.5) within one coarse step either side of the best.
 * 4. Margin m = max-min phi + r: the region was shrunk by the clearance radius r (opening.ts), so r is
 *    added back; the half cell taken off in step 1 is the resolution bias of measuring to cell centres
 *    (the blocked edge lies on average half a cell inside the r-offset of the points).
 * Resolution of m: about cell / 2 (edge quantisation) + cell / sqrt(2) (samples rounded to cells) +
 * cell / sqrt(2) (translations on cell centres) + the scallop r - sqrt(r^2 - (s/2)^2), plus the points'
 * noise and up to half the fine rotation step times the silhouette's radius of lost optimum; `resolution`
 * reports the grid part. Negative m (overlap) is an estimate: it is measured into the blocked band round
 * the points and beyond it into unscanned space.
 * Carriage: by default the object is carried (free in the opening: any translation). With `restOn` (the v of
 * the surface it stands on: the opening's floor, plus a trolley's or skates' height), its lowest point stays
 * on that level: only translations that put the silhouette's lowest sample on the row of `restOn` are tried,
 * and the floor does not count as an obstacle (each column free just above that level, within the floor
 * points' blocked band, is freed all the way down, so the jambs still bound the sides down to the floor). The margin is then the
 * smaller of the sides' and the head's; a trolley narrower than the object is assumed.
 * Limits: the silhouette's interior is not checked, so islands of points inside the opening smaller than
 * the silhouette are missed; the fit is planar (one section), not a 3D passage.
 *
 * Decision (guard bands after JCGM 106:2012): with U the expanded uncertainty and r_req
 * the required margin, 'passes' if m - U >= r_req, 'does-not-pass' if m + U < r_req (collides when
 * m + U < 0), else 'too-close-to-call'.
 */

export interface FitOptions {
  rangeDegrees?: number
  coarseStepDegrees?: number
  fineStepDegrees?: number
  /** Silhouette boundary sample step, metres (default: the opening's cell). */
  sampleStep?: number
  /**
   * Keep the object within this many degrees of its scanned orientation (0: as it stands; e.g. a chest that
   * must stay upright). Turns from -max to +max are searched instead of rangeDegrees.
   */
  maxTurnDegrees?: number
  /** The object rests on this level (v, metres) instead of being carried: see the header. */
  restOn?: number
  /**
   * With `restOn`: how far the floor's points scatter above their surface (metres; about 4 sigma of their
   * noise). The floor's blocked band reaches that much higher, and is freed as well: noise on the floor is no
   * obstacle to an object resting on it.
   */
  floorBand?: number
}

export type FitOutcome = 'passes' | 'does-not-pass' | 'too-close-to-call'

export interface Fit {
  ok: true
  rotationDegrees: number
  /** Where the silhouette's hull centroid goes, metres. */
  translation: [number, number]
  margin: number
  requiredMargin: number
  expandedUncertainty: number
  outcome: FitOutcome
  collides: boolean
  /** The placed silhouette sample with the smallest margin, and the nearest section point to it. */
  nearest: { silhouettePoint: [number, number]; boundaryPoint: [number, number]; pointDistance: number }
  /** The placed silhouette hull (anticlockwise ring), metres. */
  placed: Float64Array
  rotationsTried: number
  /** Grid part of the margin's resolution, metres (see header). */
  resolution: number
}

export type FitResult =
  | Fit
  | { ok: false; reason: 'empty-silhouette' | 'degenerate-silhouette' | 'not-finite' | 'invalid-margin' | 'invalid-uncertainty' | 'invalid-options' | 'rest-level-outside' }

export function fitThrough(
  opening: FreeOpening,
  objectOutline: Float64Array,
  requiredMargin: number,
  expandedUncertainty: number,
  options: FitOptions = {},
): FitResult {
  if (objectOutline.length < 2) return { ok: false, reason: 'empty-silhouette' }
  for (let i = 0; i < objectOutline.length; i++)
    if (!Number.isFinite(objectOutline[i]!)) return { ok: false, reason: 'not-finite' }
  if (!Number.isFinite(requiredMargin)) return { ok: false, reason: 'invalid-margin' }
  if (!(Number.isFinite(expandedUncertainty) && expandedUncertainty >= 0)) return { ok: false, reason: 'invalid-uncertainty' }
  const { u0, v0, cell, nu, nv } = opening.grid
  const range = options.rangeDegrees ?? 180
  const coarse = options.coarseStepDegrees ?? 5
  const fine = options.fineStepDegrees ?? 0.5
  const step = options.sampleStep ?? cell
  const maxTurn = options.maxTurnDegrees
  if (!([range, coarse, fine, step].every((x) => Number.isFinite(x) && x > 0) && range <= 360))
    return { ok: false, reason: 'invalid-options' }
  if (maxTurn !== undefined && !(Number.isFinite(maxTurn) && maxTurn >= 0 && maxTurn <= 180)) return { ok: false, reason: 'invalid-options' }
  const restOn = options.restOn
  if (restOn !== undefined && !Number.isFinite(restOn)) return { ok: false, reason: 'invalid-options' }
  const hull = convexHull(objectOutline)
  if (!hull.ok) return { ok: false, reason: 'degenerate-silhouette' }
  const h = hull.xy, hn = h.length >> 1

  // Area centroid of the hull (about its first vertex, as signedArea does).
  const area = signedArea(h)
  let cx = 0, cy = 0
  for (let i = 1; i < hn - 1; i++) {
    const ax = h[2 * i]! - h[0]!, ay = h[2 * i + 1]! - h[1]!, bx = h[2 * i + 2]! - h[0]!, by = h[2 * i + 3]! - h[1]!
    const w = (ax * by - bx * ay) / 2
    cx += (w * (ax + bx)) / 3
    cy += (w * (ay + by)) / 3
  }
  cx = h[0]! + cx / area
  cy = h[1]! + cy / area

  // Boundary samples relative to the centroid.
  const sx: number[] = [], sy: number[] = []
  for (let i = 0; i < hn; i++) {
    const j = (i + 1) % hn
    const ax = h[2 * i]!, ay = h[2 * i + 1]!, bx = h[2 * j]!, by = h[2 * j + 1]!
    const parts = Math.max(1, Math.ceil(Math.hypot(bx - ax, by - ay) / step))
    for (let k = 0; k < parts; k++) {
      const f = k / parts
      sx.push(ax + f * (bx - ax) - cx)
      sy.push(ay + f * (by - ay) - cy)
    }
  }
  const K = sx.length

  // Resting: the floor is no obstacle; the region goes on below the resting level where the row above is free.
  let region = opening.region
  const restRow = restOn === undefined ? -1 : Math.round((restOn - v0) / cell - 0.5)
  if (restOn !== undefined) {
    // Each column's lowest free cell at or above the resting row, within the floor points' blocked band
    // (the radius and a cell): everything below it is freed.
    region = region.slice()
    const band = options.floorBand !== undefined && Number.isFinite(options.floorBand) && options.floorBand > 0 ? options.floorBand : 0
    const reach = Math.ceil((opening.radius + cell + band) / cell) + 1
    for (let i = 0; i < nu; i++) {
      let first = -1
      for (let j = Math.max(0, restRow); j <= Math.min(nv - 1, restRow + reach); j++)
        if (opening.region[i + j * nu]) {
          first = j
          break
        }
      for (let j = first - 1; j >= 0; j--) region[i + j * nu] = 1
    }
  }

  // Signed field phi (metres).
  const inside = squaredDistanceTransform(region, nu, nv, 0)
  const outside = squaredDistanceTransform(region, nu, nv, 1)
  const phi = new Float64Array(nu * nv)
  const cells: number[] = []
  for (let c = 0; c < phi.length; c++) {
    if (region[c]) {
      phi[c] = Math.sqrt(inside[c]!) * cell - cell / 2
      cells.push(c)
    } else phi[c] = -(Math.sqrt(outside[c]!) * cell - cell / 2)
  }

  let best = -Infinity, bestT = -1, bestK = 0, bestTheta = 0, tried = 0
  const oi = new Int32Array(K), oj = new Int32Array(K), off = new Int32Array(K)
  const evaluate = (deg: number): void => {
    tried++
    const a = (deg * Math.PI) / 180, cs = Math.cos(a), sn = Math.sin(a)
    let iMin = 0, iMax = 0, jMin = 0, jMax = 0
    for (let k = 0; k < K; k++) {
      const i = Math.round((cs * sx[k]! - sn * sy[k]!) / cell), j = Math.round((sn * sx[k]! + cs * sy[k]!) / cell)
      oi[k] = i
      oj[k] = j
      off[k] = i + j * nu
      if (i < iMin) iMin = i
      if (i > iMax) iMax = i
      if (j < jMin) jMin = j
      if (j > jMax) jMax = j
    }
    let startK = 0
    // Resting: the lowest sample sits on the resting row, so only translations of one row are tried.
    const onlyRow = restOn === undefined ? -1 : restRow - jMin
    for (const t of cells) {
      const ti = t % nu, tj = (t - ti) / nu
      if (restOn !== undefined && tj !== onlyRow) continue
      const within = ti + iMin >= 0 && ti + iMax < nu && tj + jMin >= 0 && tj + jMax < nv
      let low = Infinity, arg = startK
      for (let c = 0, k = startK; c < K; c++, k++) {
        if (k === K) k = 0
        let val: number
        if (within) val = phi[t + off[k]!]!
        else {
          const i = Math.min(nu - 1, Math.max(0, ti + oi[k]!)), j = Math.min(nv - 1, Math.max(0, tj + oj[k]!))
          val = phi[i + j * nu]!
        }
        if (val < low) {
          low = val
          arg = k
          if (low <= best) break
        }
      }
      if (low <= best) {
        startK = arg
        continue
      }
      best = low
      bestT = t
      bestK = arg
      bestTheta = deg
    }
  }
  let lo = -Infinity, hi = Infinity
  if (maxTurn !== undefined) {
    lo = -maxTurn
    hi = maxTurn
    evaluate(0)
    for (let d = coarse; d < maxTurn - 1e-9; d += coarse) evaluate(d), evaluate(-d)
    if (maxTurn > 0) evaluate(maxTurn), evaluate(-maxTurn)
  } else for (let d = 0; d < range - 1e-9; d += coarse) evaluate(d)
  const centre = bestTheta
  for (let d = centre - coarse + fine; d < centre + coarse - 1e-9; d += fine)
    if (Math.abs(d - centre) > 1e-9 && d >= lo - 1e-9 && d <= hi + 1e-9) evaluate(d)

  if (bestT < 0) return { ok: false, reason: 'rest-level-outside' }

  // Reported in (-180, 180]: a turn either way from the scanned orientation.
  let rot = ((bestTheta % 360) + 360) % 360
  if (rot > 180 + 1e-9) rot -= 360
  const a = (bestTheta * Math.PI) / 180, cs = Math.cos(a), sn = Math.sin(a)
  const ti = bestT % nu, tj = (bestT - ti) / nu
  const tu = u0 + (ti + 0.5) * cell, tv = v0 + (tj + 0.5) * cell
  const placed = new Float64Array(2 * hn)
  for (let i = 0; i < hn; i++) {
    const x = h[2 * i]! - cx, y = h[2 * i + 1]! - cy
    placed[2 * i] = tu + cs * x - sn * y
    placed[2 * i + 1] = tv + sn * x + cs * y
  }
  const pu = tu + cs * sx[bestK]! - sn * sy[bestK]!, pv = tv + sn * sx[bestK]! + cs * sy[bestK]!
  const pts = opening.points
  let near = 0, nearD2 = Infinity
  for (let p = 0; p < pts.length >> 1; p++) {
    const d2 = (pts[2 * p]! - pu) ** 2 + (pts[2 * p + 1]! - pv) ** 2
    if (d2 < nearD2) (nearD2 = d2), (near = p)
  }

  const r = opening.radius
  const margin = best + r
  const U = expandedUncertainty
  const outcome = decideFit(margin, U, requiredMargin)
  return {
    ok: true,
    rotationDegrees: Math.abs(rot) < 1e-9 || rot >= 360 - 1e-9 ? 0 : rot,
    translation: [tu, tv],
    margin,
    requiredMargin,
    expandedUncertainty: U,
    outcome,
    collides: margin + U < 0,
    nearest: {
      silhouettePoint: [pu, pv],
      boundaryPoint: [pts[2 * near]!, pts[2 * near + 1]!],
      pointDistance: Math.sqrt(nearD2),
    },
    placed,
    rotationsTried: tried,
    resolution: fitResolution(opening),
  }
}

/** The guard-band rule of JCGM 106:2012: margin m, expanded uncertainty U, required r. */
export function decideFit(margin: number, expandedUncertainty: number, requiredMargin: number): FitOutcome {
  const U = expandedUncertainty
  return margin - U >= requiredMargin ? 'passes' : margin + U < requiredMargin ? 'does-not-pass' : 'too-close-to-call'
}

/** Grid part of a fit's margin resolution on this opening, metres (see the header). */
export function fitResolution(opening: FreeOpening): number {
  const cell = opening.grid.cell, r = opening.radius, s2 = opening.spacing / 2
  return cell / 2 + Math.SQRT2 * cell + (s2 < r ? r - Math.sqrt(r * r - s2 * s2) : r)
}
