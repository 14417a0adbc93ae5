import { measurePointToPlane } from '@shared/measure/pointToPlane'
import { COVERAGE_FACTOR } from '@shared/measure/uncertainty'
import type { Check } from '@shared/schemas'
import { partsOf, type Snapped } from '../checkParts'
import type { KindCheck } from './index'

const WHY = {
  collinear: 'the points on the plane lie in a line (or on one point): no plane is defined through them. Pick them spread over the surface.',
  'too-few-points': 'at least three points on the plane are needed.',
  'not-finite': 'the distance is not defined (a coordinate is not a number).',
  'invalid-uncertainty': "an anchor's uncertainty is not defined.",
} as const

/** The first anchor is the point, the rest the plane: its distance from their fitted plane, with the parts of each anchor. */
function pointToPlaneCheck(base: Check, s: Snapped[]): Check {
  const [p, ...plane] = s
  // Plane points closer to a line than the anchors' tolerance do not fix the plane's turn about that line.
  const tolerance = Math.max(...plane.map((q) => q.checked.tolerance))
  const r = measurePointToPlane(p!.at, plane.map((q) => q.at), p!.u, plane.map((q) => q.u), tolerance)
  if (!r.ok) return { ...base, state: 'invalid-geometry', reason: WHY[r.reason] }
  // Each anchor's parts scaled by its sensitivity (its contribution over its own standard uncertainty).
  const scale = (i: number) => (s[i]!.u > 0 ? r.perPoint[i]! / s[i]!.u : 0)
  return {
    ...base,
    value: r.distance,
    unit: 'm',
    standardUncertainty: r.u,
    expandedUncertainty: COVERAGE_FACTOR * r.u,
    parts: partsOf(s, scale),
    reason: base.reason ?? (r.nearZero ? 'The point lies within the uncertainty of the plane: the distance is biased upward near zero and its uncertainty only indicative.' : null),
    result: {
      kind: 'point-to-plane',
      signed: r.signed,
      normal: r.normal,
      centroid: r.centroid,
      planeRms: r.planeRms,
      tiltFromLevel: r.tiltFromLevel,
      tiltFromPlumb: r.tiltFromPlumb,
      nearZero: r.nearZero,
    },
  }
}

export const pointToPlane: KindCheck = { check: (base, snapped) => pointToPlaneCheck(base, snapped) }
