/**
 * Standard-uncertainty budget of one anchor (a picked or snapped point), in metres.
 *
 * Independent parts combine in quadrature, u = sqrt(sum u_i^2) (JCGM 100:2008 section 5.1, eq. 10 with unit
 * sensitivities and no correlation). The usual parts of an anchor (README.md here, "An anchor's budget"):
 * - the point's own per-axis standard uncertainty (isotropic: the same u along x, y and z);
 * - picking: the surface lies somewhere within one point spacing, a rectangular distribution of full width
 *   = spacing, so u = (spacing / 2) / sqrt(3) = spacing / sqrt(12) per axis (GUM 4.3.7);
 * - the placement's registration, as a per-axis standard uncertainty made from its accepted RMS by
 *   `registrationUncertainty` below. Two anchors on the same placement share it and it largely cancels in
 *   their distance (common practice; README.md here, "Registration terms"); the caller leaves it out of both then (server/markers/check.ts).
 * Expanded uncertainty U = k u with k = 2 (about 95 % for a normal distribution, GUM 6.2 / Annex G).
 *
 * Degenerate input: a part that is negative or not finite gives { ok: false }, never a NaN total; an
 * empty list is a valid budget of zero.
 */

export const COVERAGE_FACTOR = 2

export interface UncertaintyPart {
  /** Short stable name shown in the check, e.g. 'point', 'picking', 'registration'. */
  name: string
  /** Standard uncertainty of this part, metres. */
  u: number
}

export type UncertaintyBudget =
  | { ok: true; total: number; expanded: number; k: number; parts: UncertaintyPart[] }
  | { ok: false; reason: 'invalid-part'; part: string }
  | { ok: false; reason: 'invalid-coverage-factor'; part?: undefined }

/** Standard uncertainty of a rectangular distribution of half-width a (GUM 4.3.7): a / sqrt(3); |a| is used. */
export function rectangularUncertainty(halfWidth: number): number {
  return Math.abs(halfWidth) / Math.sqrt(3)
}

/** Picking term for a point spacing (metres): full width = spacing, so spacing / sqrt(12). */
export function pickingUncertainty(spacing: number): number {
  return rectangularUncertainty(spacing / 2)
}

/** Combines independent parts in quadrature; the parts are returned as given (copied). */
export function combineInQuadrature(parts: readonly UncertaintyPart[], k = COVERAGE_FACTOR): UncertaintyBudget {
  if (!(Number.isFinite(k) && k > 0)) return { ok: false, reason: 'invalid-coverage-factor' }
  let sum = 0
  for (const part of parts) {
    if (!(Number.isFinite(part.u) && part.u >= 0)) return { ok: false, reason: 'invalid-part', part: part.name }
    sum += part.u * part.u
  }
  const total = Math.sqrt(sum)
  return { ok: true, total, expanded: k * total, k, parts: parts.map((p) => ({ name: p.name, u: p.u })) }
}

export interface AnchorInputs {
  /** The point's own per-axis standard uncertainty, metres. */
  point: number
  /** Local point spacing, metres (0 when the anchor is a computed point, not a pick). */
  spacing: number
  /** Registration RMS of the placement, metres; omit when it cancels (same scan on both ends). */
  registrationRms?: number
}

/** The anchor budget: parts 'point', 'picking' and (when given) 'registration'. */
export function anchorBudget(inputs: AnchorInputs, k = COVERAGE_FACTOR): UncertaintyBudget {
  if (!(Number.isFinite(inputs.spacing) && inputs.spacing >= 0)) return { ok: false, reason: 'invalid-part', part: 'picking' }
  const parts: UncertaintyPart[] = [
    { name: 'point', u: inputs.point },
    { name: 'picking', u: pickingUncertainty(inputs.spacing) },
  ]
  if (inputs.registrationRms !== undefined) parts.push({ name: 'registration', u: inputs.registrationRms })
  return combineInQuadrature(parts, k)
}

/**
 * Which figure a placement's registration RMS is (shared/schemas/registrations.ts RMS_SOURCES):
 * - 'tie-points': sqrt(mean |r|^2) of the 3D residuals of the n fitted tie pairs (closed form);
 * - 'check-points': the same over held-out check points, under the accepted transform;
 * - 'icp': ICP's point-to-plane RMS, sqrt(mean ((q - t) . n)^2), a distance along one direction.
 */
export interface RegistrationFigure {
  source: 'tie-points' | 'check-points' | 'icp'
  /** Metres. */
  rms: number
  /** Pairs behind the figure (fitted tie pairs, check points, or ICP pairs). */
  count: number
}

/** Parameters of a rigid transform: three for the rotation, three for the translation. */
const RIGID_PARAMETERS = 6

/**
 * The per-axis standard uncertainty (metres) a registration gives each anchor on its placement, the
 * conversion from the registration's RMS to the isotropic per-axis term of the anchor budget:
 * - A 3D residual r = (rx, ry, rz) with independent per-axis errors of standard deviation s has
 *   E|r|^2 = 3 s^2, so a 3D RMS is sqrt(3) times the per-axis figure: s = RMS / sqrt(3) (derived).
 * - Tie points: the fit spent 6 of the 3n coordinates' degrees of freedom, so the residuals are smaller
 *   than the errors; the unbiased estimate is s^2 = sum |r|^2 / (3n - 6) (least squares, residual sum over
 *   observations minus fitted parameters, as JCGM 100:2008 H.3 does for its straight line), i.e.
 *   s = RMS sqrt(n / (3n - 6)). At n = 3 that is the RMS itself; for many pairs it tends to RMS / sqrt(3).
 * - Check points were not fitted: s = RMS / sqrt(3).
 * - ICP's point-to-plane RMS is already a distance along one direction (the surface normal), so it is the
 *   per-axis figure itself: s = RMS (thousands of pairs: the 6 parameters change nothing).
 * The residual of a pair holds both points' own noise as well as the transform's error, so this overstates
 * the transform's error near the middle of the pairs and may understate it far outside them: it is the
 * usual conservative reading of a registration RMS (common practice, no source). Null when the figure
 * gives no estimate (n <= 2 tie pairs, a negative or non-finite RMS).
 */
export function registrationUncertainty(figure: RegistrationFigure): number | null {
  const { source, rms, count } = figure
  if (!(Number.isFinite(rms) && rms >= 0) || !(count >= 1)) return null
  if (source === 'icp') return rms
  if (source === 'check-points') return rms / Math.sqrt(3)
  const dof = 3 * count - RIGID_PARAMETERS
  if (dof <= 0) return null
  return rms * Math.sqrt(count / dof)
}
