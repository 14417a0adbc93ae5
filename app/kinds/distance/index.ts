import { measureDistance } from '@shared/measure/distance'
import { formatLength, formatWithUncertainty } from '@shared/format/units'
import { resultOf } from '@shared/schemas'
import { ICONS } from '@/components/base/icons'
import { withU } from '@/components/markers/markerFacts'
import { anchorOf } from '@/components/viewer/markerPlacing'
import type { MarkerKindUi } from '../types'

/** A distance: two clicks, the length between them (and its parts along the scene's axes). */
export const distanceUi: MarkerKindUi<'distance'> = {
  kind: 'distance',
  title: 'Distance',
  icon: ICONS.kindDistance,
  colour: '#F2B134',
  tool: { id: 'distance', key: 'D', label: 'Distance marker: two points' },
  clicks: () => 2,
  hint: (count) => (count === 0 ? 'Click the first end of the distance on the points.' : 'Click the other end. Esc starts over.'),
  preview(points, u, unit) {
    if (points.length !== 2) return null
    const d = measureDistance(points[0]!, points[1]!, u[0] ?? 0, u[1] ?? 0)
    return d.ok ? formatWithUncertainty(d.distance, 2 * d.u.distance, 'length', unit) : null
  },
  bodyOf: (picks) => ({ kind: 'distance', anchors: picks.map(anchorOf), params: {} }),
  draw: (_marker, points, colour) => ({ strokes: points.length === 2 ? [{ points: [...points], closed: false, color: colour }] : [], at: null }),
  caption: () => 'distance between the anchors',
  facts(marker, { unit }) {
    const d = resultOf(marker.check, 'distance')
    if (!d) return []
    const k = marker.check.coverageFactor
    return [
      { term: 'dX', text: formatLength(d.dx, unit) },
      { term: 'dY', text: formatLength(d.dy, unit) },
      { term: 'dZ', text: formatLength(d.dz, unit) },
      { term: 'horizontal', text: d.uHorizontal === null ? `${formatLength(d.horizontal, unit)} (no uncertainty: plumb)` : withU(d.horizontal, k * d.uHorizontal, unit) },
      { term: 'vertical', text: withU(d.vertical, k * d.uVertical, unit) },
    ]
  },
}
