/**
 * One standard uncertainty (metres) for a point measured by range and two angles.
 *
 * In the beam's own frame the point's covariance is taken as diag(u_r^2, u_t^2, u_t^2), independent parts
 * (JCGM 100:2008 section 5.1, law of propagation for uncorrelated inputs):
 * - along the beam u_r^2 = u_mean^2 + u_sys^2: the random part of the averaged range (s^2 / n, the
 *   squared standard uncertainty of the mean, GUM 4.2.3) plus the instrument's stated systematic range
 *   term, which averaging does not shrink (common practice);
 * - across the beam, in each of the two directions, u_t = r * u_angle (u_angle in radians): a small angle
 *   error moves the point sideways by the range times the angle. (The horizontal part is strictly
 *   r cosV uH; r uH is the conservative bound.)
 * The single value returned is the per-axis root mean square, sqrt((u_r^2 + 2 u_t^2) / 3): the standard
 * uncertainty of an isotropic point with the same total variance (trace of the covariance), which is what
 * the isotropic formulas downstream (distance: sqrt(uA^2 + uB^2)) take. It understates the worst
 * direction when one term dominates; the parts are returned too for a check that wants them.
 */
export interface RangeAngleUncertainty {
  alongBeam: number
  acrossBeam: number
  perAxis: number
}

export function rangeAngleUncertainty(
  range: number,
  meanVariance: number,
  systematicRange: number,
  angular: number,
  out: RangeAngleUncertainty = { alongBeam: 0, acrossBeam: 0, perAxis: 0 },
): RangeAngleUncertainty {
  const along2 = meanVariance + systematicRange * systematicRange
  const across = Math.abs(range) * angular
  out.alongBeam = Math.sqrt(along2)
  out.acrossBeam = across
  out.perAxis = Math.sqrt((along2 + 2 * across * across) / 3)
  return out
}
