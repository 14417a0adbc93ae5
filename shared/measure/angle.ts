/**
 * Angle at B between the arms B->A and B->C, in degrees, with its standard uncertainty.
 *
 * Frame: any Cartesian frame, metres. With u = A - B, v = C - B, theta = atan2(|u x v|, u . v), in
 * [0, 180] degrees: unlike acos of the normalised dot product this keeps full precision near 0 and 180
 * (common practice), so no clamping is needed.
 * Uncertainty: independent isotropic per-coordinate uncertainties sA, sB, sC (metres); with a = |BA|,
 * c = |BC|, b = |AC|: u^2(theta) = sA^2/a^2 + sC^2/c^2 + sB^2 b^2/(a^2 c^2) radians^2 (derived from GUM eq. 10,
 * JCGM 100:2008 section 5.1, eq. 10; derived), returned in radians and degrees.
 *
 * Degenerate input: an arm shorter than 1e-9 m gives 'coincident' (no direction). A straight or folded
 * angle (collinear points) is a valid value (180 or 0), but the angle cannot leave [0, 180], so the
 * first-order uncertainty is only a rough spread there: nearBound is true when theta -+ 2u crosses 0 or
 * 180 degrees and the check should say so.
 */

export const ZERO_ARM = 1e-9
const DEG = 180 / Math.PI

export interface Angle {
  ok: true
  degrees: number
  radians: number
  u: { radians: number; degrees: number }
  /** Arm lengths |BA|, |BC| and the opposite side |AC|, metres. */
  a: number
  c: number
  b: number
  nearBound: boolean
}

export type AngleResult = Angle | { ok: false; reason: 'coincident' | 'not-finite' | 'invalid-uncertainty' }

export function measureAngle(
  pa: ArrayLike<number>,
  pb: ArrayLike<number>,
  pc: ArrayLike<number>,
  sA: number,
  sB: number,
  sC: number,
): AngleResult {
  const ux = pa[0]! - pb[0]!, uy = pa[1]! - pb[1]!, uz = pa[2]! - pb[2]!
  const vx = pc[0]! - pb[0]!, vy = pc[1]! - pb[1]!, vz = pc[2]! - pb[2]!
  if (![ux, uy, uz, vx, vy, vz].every(Number.isFinite)) return { ok: false, reason: 'not-finite' }
  if (![sA, sB, sC].every((s) => Number.isFinite(s) && s >= 0)) return { ok: false, reason: 'invalid-uncertainty' }
  const a = Math.hypot(ux, uy, uz), c = Math.hypot(vx, vy, vz)
  if (a <= ZERO_ARM || c <= ZERO_ARM) return { ok: false, reason: 'coincident' }
  const cross = Math.hypot(uy * vz - uz * vy, uz * vx - ux * vz, ux * vy - uy * vx)
  const dot = ux * vx + uy * vy + uz * vz
  const radians = Math.atan2(cross, dot)
  const b = Math.hypot(pc[0]! - pa[0]!, pc[1]! - pa[1]!, pc[2]! - pa[2]!)
  const u = Math.sqrt((sA * sA) / (a * a) + (sC * sC) / (c * c) + (sB * sB * b * b) / (a * a * c * c))
  return {
    ok: true,
    degrees: radians * DEG,
    radians,
    u: { radians: u, degrees: u * DEG },
    a,
    c,
    b,
    nearBound: radians - 2 * u < 0 || radians + 2 * u > Math.PI,
  }
}
