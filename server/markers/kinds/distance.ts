import { measureDistance } from '@shared/measure/distance'
import { COVERAGE_FACTOR } from '@shared/measure/uncertainty'
import type { Check } from '@shared/schemas'
import { partsOf, type Snapped } from '../checkParts'
import type { KindCheck } from './index'

/** A distance: two anchors, the length between their snapped points with its parts. */
function distanceCheck(base: Check, s: Snapped[]): Check {
  const d = measureDistance(s[0]!.at, s[1]!.at, s[0]!.u, s[1]!.u)
  if (!d.ok) {
    const why = d.reason === 'zero-length' ? 'the two anchors snap to the same point: a zero length.' : `the distance is not defined (${d.reason}).`
    return { ...base, state: 'invalid-geometry', reason: why }
  }
  return {
    ...base,
    value: d.distance,
    unit: 'm',
    standardUncertainty: d.u.distance,
    expandedUncertainty: COVERAGE_FACTOR * d.u.distance,
    parts: partsOf(s, () => 1),
    result: { kind: 'distance', dx: d.dx, dy: d.dy, dz: d.dz, horizontal: d.horizontal, vertical: d.vertical, uHorizontal: d.u.horizontal, uVertical: d.u.vertical },
  }
}

export const distance: KindCheck = { check: (base, snapped) => distanceCheck(base, snapped) }
