import { fitPlane } from '../geometry/planeFit'
import { propagate } from './gum'

/**
 * The distance from a point P to a plane fitted on points Q1..Qm (m >= 3), with its standard uncertainty: a
 * common site check of a wall out of plumb or a floor out of level (how far a point of it stands off the
 * plane of the rest).
 *
 * Plane: least squares through the Q's by principal components (shared/geometry/planeFit.ts; Shakarji 1998);
 * with three points it is the plane through them. Signed distance d = (P - c) . n, c the centroid, n the unit
 * normal turned up (z >= 0; for a vertical plane as planeFit turns it). The value reported is |d|.
 * Uncertainty: every coordinate of P and the Q's is an input with the per-coordinate standard uncertainty of
 * its point (independent points); u(d) by GUM eq. 10 (JCGM 100:2008 section 5.1.2) with central-difference
 * sensitivities (shared/measure/gum.ts), the normal kept on the side of the unperturbed one. Near d = 0 the
 * folded value |d| is biased upward by about u (its uncertainty is then only indicative): `nearZero` says so.
 *
 * Tilt: the plane's angle from level (its normal from the vertical) and from plumb (90 degrees less), degrees.
 * Degenerate input: fewer than 3 plane points, plane points in a line (no unique plane, or their RMS spread
 * across their main line within `minSpread`, the picking tolerance), non-finite
 * coordinates or uncertainties give { ok: false } with the reason, never NaN.
 */

export type PointToPlane =
  | {
      ok: true
      /** |d|, metres. */
      distance: number
      /** d: positive on the side the normal points (up for a floor). */
      signed: number
      normal: [number, number, number]
      centroid: [number, number, number]
      /** Standard uncertainty of d, metres. */
      u: number
      /** Contribution of each input point (P first), metres: |c| u of its three coordinates combined. */
      perPoint: number[]
      /** Orthogonal RMS of the plane points about their plane, metres (0 for three points). */
      planeRms: number
      tiltFromLevel: number
      tiltFromPlumb: number
      /** |d| is within 2 u of zero: the folded value is biased and its uncertainty only indicative. */
      nearZero: boolean
    }
  | { ok: false; reason: 'too-few-points' | 'collinear' | 'not-finite' | 'invalid-uncertainty' }

export function measurePointToPlane(
  point: ArrayLike<number>,
  plane: readonly ArrayLike<number>[],
  uPoint: number,
  uPlane: readonly number[],
  /** The plane points must spread at least this far (RMS, metres) across their main line: the anchors' tolerance. */
  minSpread = 0,
): PointToPlane {
  const m = plane.length
  if (m < 3) return { ok: false, reason: 'too-few-points' }
  const x = new Float64Array(3 * (m + 1))
  for (let k = 0; k < 3; k++) x[k] = point[k]!
  plane.forEach((q, i) => {
    for (let k = 0; k < 3; k++) x[3 * (i + 1) + k] = q[k]!
  })
  if (!x.every(Number.isFinite)) return { ok: false, reason: 'not-finite' }
  const us = [uPoint, ...uPlane]
  if (us.length !== m + 1 || !us.every((u) => Number.isFinite(u) && u >= 0)) return { ok: false, reason: 'invalid-uncertainty' }
  const fit = fitPlane(x.subarray(3))
  if (!fit || Math.sqrt(fit.eigenvalues[1]) <= minSpread) return { ok: false, reason: 'collinear' }
  const n0 = fit.normal
  // d as a function of every coordinate; the normal kept on n0's side so a perturbation cannot flip it.
  const signedDistance = (v: Float64Array): number => {
    const f = fitPlane(v.subarray(3))
    if (!f) return NaN
    const s = f.normal[0] * n0[0] + f.normal[1] * n0[1] + f.normal[2] * n0[2] < 0 ? -1 : 1
    return s * ((v[0]! - f.centroid[0]) * f.normal[0] + (v[1]! - f.centroid[1]) * f.normal[1] + (v[2]! - f.centroid[2]) * f.normal[2])
  }
  const inputs = new Float64Array(x.length)
  us.forEach((u, i) => inputs.fill(u, 3 * i, 3 * i + 3))
  const g = propagate(signedDistance, x, inputs)
  if (!g.ok) return { ok: false, reason: g.reason === 'invalid-uncertainty' ? 'invalid-uncertainty' : 'not-finite' }
  const perPoint = us.map((_, i) => Math.hypot(g.contributions[3 * i]!, g.contributions[3 * i + 1]!, g.contributions[3 * i + 2]!))
  const tiltFromLevel = (Math.acos(Math.min(1, Math.abs(n0[2]))) * 180) / Math.PI
  return {
    ok: true,
    distance: Math.abs(g.value),
    signed: g.value,
    normal: n0,
    centroid: fit.centroid,
    u: g.u,
    perPoint,
    planeRms: fit.rms,
    tiltFromLevel,
    tiltFromPlumb: 90 - tiltFromLevel,
    nearZero: Math.abs(g.value) < 2 * g.u,
  }
}
