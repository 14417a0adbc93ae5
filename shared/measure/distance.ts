/**
 * Distance between two anchors A and B with its standard uncertainty.
 *
 * Frame: the project frame, metres, Z up. dX, dY, dZ = B - A; horizontal = sqrt(dX^2 + dY^2), vertical = dZ
 * (signed, positive when B is higher).
 * Uncertainty: uA and uB are per-coordinate (isotropic) standard uncertainties of independent points:
 * each of x, y, z of A has standard uncertainty uA. With sensitivity c = (B - A)/d, GUM eq. 10 (JCGM 100:2008
 * section 5.1) gives u^2(d) = c^T (uA^2 + uB^2) I c = uA^2 + uB^2 whatever the direction; likewise
 * u(horizontal) = u(vertical) = sqrt(uA^2 + uB^2). Correlated points (shared registration) are the
 * caller's to remove from both budgets before calling.
 *
 * Degenerate input: coincident anchors (d <= 1e-9 m) give 'zero-length' (the direction and hence the
 * sensitivity are undefined); a plumb line (horizontal <= 1e-9 m) keeps the distance but reports the
 * horizontal part's uncertainty as null, because the first-order formula does not hold at h = 0 (h cannot go
 * negative). Non-finite coordinates or a negative uncertainty are refused.
 */

export const ZERO_LENGTH = 1e-9

export interface Distance {
  ok: true
  distance: number
  dx: number
  dy: number
  dz: number
  horizontal: number
  vertical: number
  u: { distance: number; horizontal: number | null; vertical: number }
}

export type DistanceResult = Distance | { ok: false; reason: 'zero-length' | 'not-finite' | 'invalid-uncertainty' }

export function measureDistance(a: ArrayLike<number>, b: ArrayLike<number>, uA: number, uB: number): DistanceResult {
  const dx = b[0]! - a[0]!, dy = b[1]! - a[1]!, dz = b[2]! - a[2]!
  if (!(Number.isFinite(dx) && Number.isFinite(dy) && Number.isFinite(dz))) return { ok: false, reason: 'not-finite' }
  if (!(Number.isFinite(uA) && Number.isFinite(uB) && uA >= 0 && uB >= 0)) return { ok: false, reason: 'invalid-uncertainty' }
  const distance = Math.hypot(dx, dy, dz)
  if (distance <= ZERO_LENGTH) return { ok: false, reason: 'zero-length' }
  const horizontal = Math.hypot(dx, dy)
  const u = Math.hypot(uA, uB)
  return {
    ok: true,
    distance,
    dx,
    dy,
    dz,
    horizontal,
    vertical: dz,
    u: { distance: u, horizontal: horizontal <= ZERO_LENGTH ? null : u, vertical: u },
  }
}
