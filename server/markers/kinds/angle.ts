import { measureAngle } from '@shared/measure/angle'
import { COVERAGE_FACTOR } from '@shared/measure/uncertainty'
import type { Check } from '@shared/schemas'
import { partsOf, type Snapped } from '../checkParts'
import type { KindCheck } from './index'

/** An angle: first arm, vertex, second arm; the angle at the vertex with its parts. */
function angleCheck(base: Check, s: Snapped[]): Check {
  const g = measureAngle(s[0]!.at, s[1]!.at, s[2]!.at, s[0]!.u, s[1]!.u, s[2]!.u)
  if (!g.ok) {
    const why = g.reason === 'coincident' ? 'an arm has zero length: the vertex snaps to the same point as an arm.' : `the angle is not defined (${g.reason}).`
    return { ...base, state: 'invalid-geometry', reason: why }
  }
  const deg = 180 / Math.PI
  // Sensitivities (derived from JCGM 100:2008 eq. 10; shared/measure/angle.ts): arm ends 1/a and 1/c, the vertex b/(a c), radians per metre.
  const scale = (i: number) => deg * (i === 0 ? 1 / g.a : i === 2 ? 1 / g.c : g.b / (g.a * g.c))
  return {
    ...base,
    value: g.degrees,
    unit: 'deg',
    standardUncertainty: g.u.degrees,
    expandedUncertainty: COVERAGE_FACTOR * g.u.degrees,
    parts: partsOf(s, scale),
    result: { kind: 'angle', nearBound: g.nearBound },
    reason: base.reason ?? (g.nearBound ? 'The angle is near 0 or 180 degrees, where the first-order uncertainty is only approximate.' : null),
  }
}

export const angle: KindCheck = { check: (base, snapped) => angleCheck(base, snapped) }
