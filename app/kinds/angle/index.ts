import { measureAngle } from '@shared/measure/angle'
import { formatWithUncertainty } from '@shared/format/units'
import { resultOf } from '@shared/schemas'
import { ICONS } from '@/components/base/icons'
import { add, arcPoints, arcRadius, sub } from '@/components/viewer/markerShapes'
import { anchorOf } from '@/components/viewer/markerPlacing'
import type { Vec3 } from '@/viewer/types'
import type { KindDrawing, MarkerKindUi } from '../types'

/** The two arms and the arc at the vertex; the label just outside the arc's middle. */
function armsAndArc(points: readonly Vec3[], colour: string, dashed: boolean): KindDrawing {
  if (points.length !== 3) return { strokes: points.length >= 2 ? [{ points: [...points], closed: false, color: colour, dashed }] : [], at: null }
  const [a, b, c] = points as [Vec3, Vec3, Vec3]
  const strokes: KindDrawing['strokes'] = [{ points: [a, b, c], closed: false, color: colour, ...(dashed ? { dashed } : {}) }]
  const arc = arcPoints(a, b, c, arcRadius(a, b, c))
  if (!arc.length) return { strokes, at: b }
  strokes.push({ points: arc, closed: false, color: colour, ...(dashed ? { dashed } : {}) })
  return { strokes, at: add(b, sub(arc[Math.floor(arc.length / 2)]!, b), 1.5) }
}

/**
 * An angle: arm, vertex, arm. Key N, the letter in the middle of the word (A is the view tools' anchor).
 */
export const angleUi: MarkerKindUi<'angle'> = {
  kind: 'angle',
  title: 'Angle',
  icon: ICONS.kindAngle,
  colour: '#7FC8C2',
  tool: { id: 'angle', key: 'N', label: 'Angle marker: arm, vertex, arm' },
  clicks: () => 3,
  hint(count) {
    if (count === 0) return 'Click a point on the first arm.'
    if (count === 1) return 'Click the vertex, where the two arms meet.'
    return 'Click a point on the second arm. Esc starts over.'
  },
  preview(points, u, unit) {
    if (points.length !== 3) return null
    const a = measureAngle(points[0]!, points[1]!, points[2]!, u[0] ?? 0, u[1] ?? 0, u[2] ?? 0)
    return a.ok ? formatWithUncertainty(a.degrees, 2 * a.u.degrees, 'angle', unit) : null
  },
  bodyOf: (picks) => ({ kind: 'angle', anchors: picks.map(anchorOf), params: {} }),
  draw: (_marker, points, colour) => armsAndArc(points, colour, false),
  drawPreview: (points, colour) => armsAndArc(points, colour, true),
  caption: () => 'angle at the vertex',
  note: (marker) => (resultOf(marker.check, 'angle')?.nearBound ? 'Close to 0° or 180°: the angle cannot pass those, so its uncertainty is only a rough spread here.' : null),
  anchorNames: ['first arm', 'vertex', 'second arm'],
}
