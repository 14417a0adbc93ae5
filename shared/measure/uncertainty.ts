/**
 * Standard-uncertainty budget of one anchor (a picked or snapped point), in metres.
 *
 * Independent parts combine in quadrature, u = sqrt(sum u_i^2) (JCGM 100:2008 section 5.1, eq. 10 with unit
 * sensitivities and no correlation). The usual parts of an anchor (DESIGN section 4):
 * - the point's own per-axis standard uncertainty (isotropic: the same u along x, y and z);
 * - picking: the surface lies somewhere within one point spacing, a rectangular distribution of full width
 *   = spacing, so u = (spacing / 2) / sqrt(3) = spacing / sqrt(12) per axis (GUM 4.3.7);
 * - the placement's registration RMS, taken as a per-axis standard uncertainty. Two anchors on the same
 *   scan share it and it largely cancels in their distance; the caller leaves it out of both then.
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
