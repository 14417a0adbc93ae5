import { defineAsyncComponent } from 'vue'
import { formatDegrees, formatLength, formatUncertainty, formatWithUncertainty } from '@shared/format/units'
import { PLANE_POINTS } from '@shared/kinds/pointToPlane'
import { measurePointToPlane } from '@shared/measure/pointToPlane'
import { resultOf } from '@shared/schemas'
import { anchorOf } from '@/components/viewer/markerPlacing'
import { add } from '@/components/viewer/markerShapes'
import type { Vec3 } from '@/viewer/types'
import { clicksPanelProps } from '../clicksPanel'
import type { KindDrawing, MarkerKindUi } from '../types'

const planePoints = (o: Record<string, unknown>) => (typeof o.planePoints === 'number' ? o.planePoints : PLANE_POINTS.min)
const ORDINALS = ['first', 'second', 'third', 'fourth', 'fifth', 'sixth', 'seventh', 'eighth']

/** The plane points joined in a ring, and a dashed line from the point to its foot on their plane. */
function pointAndPlane(points: readonly Vec3[], colour: string, dashed: boolean, foot: Vec3 | null): KindDrawing {
  const [p, ...plane] = points
  const strokes: KindDrawing['strokes'] = []
  if (plane.length >= 2) strokes.push({ points: [...plane], closed: plane.length >= 3, color: colour, dashed: true })
  if (p && foot) strokes.push({ points: [p, foot], closed: false, color: colour, ...(dashed ? { dashed } : {}) })
  return { strokes, at: p && foot ? add(p, [foot[0] - p[0], foot[1] - p[1], foot[2] - p[2]], 0.5) : null }
}

/** The foot of the point on the plane: P - d n. */
function footOf(p: Vec3, signed: number, n: readonly number[]): Vec3 {
  return [p[0] - signed * n[0]!, p[1] - signed * n[1]!, p[2] - signed * n[2]!]
}

/**
 * A point-to-plane distance: the point first, then three to eight points on a wall or floor; the distance from
 * the point to their fitted plane, and how far the plane is from plumb and level. Key P, for plane.
 */
export const pointToPlaneUi: MarkerKindUi<'point-to-plane'> = {
  kind: 'point-to-plane',
  title: 'Point to plane',
  icon: ['M1.5 12.5l4-3h9l-4 3z', 'M8 10.8V6.4', 'M8 3.2a1.4 1.4 0 1 0 0 2.8 1.4 1.4 0 0 0 0-2.8z'],
  colour: '#E88FB4',
  tool: { id: 'point-to-plane', key: 'P', label: 'Point to plane: a point, then points on a wall or floor' },
  options: () => ({ planePoints: PLANE_POINTS.min }),
  restartOn: ['planePoints'],
  clicks: (o) => 1 + planePoints(o),
  hint(count, o) {
    if (count === 0) return 'Click the point to measure from.'
    const n = planePoints(o)
    if (count <= n) return `Click the ${ORDINALS[count - 1]} of ${n} points on the plane (a wall or floor), spread over it.${count > 1 ? ' Esc starts over.' : ''}`
    return 'Esc starts over.'
  },
  preview(points, u, unit) {
    if (points.length < 4) return null
    const r = measurePointToPlane(points[0]!, points.slice(1), u[0] ?? 0, u.slice(1))
    return r.ok ? formatWithUncertainty(r.distance, 2 * r.u, 'length', unit) : null
  },
  bodyOf: (picks) => ({ kind: 'point-to-plane', anchors: picks.map(anchorOf), params: {} }),
  panel: {
    component: defineAsyncComponent(() => import('./PointToPlanePanel.vue')),
    bind: ({ tools }, ui) => ({
      panel: clicksPanelProps(tools, ui),
      planePoints: planePoints(tools.options),
      onPlanePoints: (n: number) => (tools.options.planePoints = n),
    }),
  },
  draw(marker, points, colour) {
    const r = resultOf(marker.check, 'point-to-plane')
    return pointAndPlane(points, colour, false, r && points[0] ? footOf(points[0], r.signed, r.normal) : null)
  },
  drawPreview(points, colour) {
    if (points.length < 4) return pointAndPlane(points, colour, true, null)
    const r = measurePointToPlane(points[0]!, points.slice(1), 0, points.slice(1).map(() => 0))
    return pointAndPlane(points, colour, true, r.ok ? footOf(points[0]!, r.signed, r.normal) : null)
  },
  caption: () => 'distance from the point to the plane',
  facts(marker, { unit }) {
    const r = resultOf(marker.check, 'point-to-plane')
    if (!r) return []
    const side = Math.abs(r.normal[2]) > 0.9 ? (r.signed >= 0 ? 'above the plane' : 'below the plane') : 'off the plane'
    return [
      { term: 'the point is', text: `${formatLength(Math.abs(r.signed), unit)} ${side}` },
      { term: 'plane from level', text: formatDegrees(r.tiltFromLevel, 2) },
      { term: 'plane from plumb', text: formatDegrees(r.tiltFromPlumb, 2) },
      { term: 'plane points about their plane', text: marker.anchors.length > 4 ? `${formatUncertainty(r.planeRms, unit)} RMS` : 'none: three points define the plane exactly' },
    ]
  },
  anchorNames: ['the point', ...ORDINALS.map((o) => `${o} on the plane`)],
}
