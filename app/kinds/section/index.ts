import { defineAsyncComponent } from 'vue'
import { formatArea, formatLength, formatUncertainty } from '@shared/format/units'
import { resultOf, SECTION_THICKNESS, type Marker, type SectionFigure } from '@shared/schemas'
import { ICONS } from '@/components/base/icons'
import { withU, type Fact } from '@/components/markers/markerFacts'
import { BRICK, planePoint, ringInPlane, sectionRectangle } from '@/components/viewer/markerShapes'
import { formatCount } from '@/lib/format'
import type { Vec3 } from '@/viewer/types'
import type { MarkerKindUi } from '../types'
import { sectionBody, sectionHint, sectionNumbersBody, sectionProblem, type SectionOptions } from './placing'
import { SECTION_TOOL } from './tool'

/** A section's facts: its slab, and its free opening (or why there is none). */
export function sectionFigureFacts(s: SectionFigure, unit: Parameters<typeof formatLength>[1]): Fact[] {
  const e = s.extents
  const out: Fact[] = [
    { term: 'points in the slab', text: formatCount(s.pointCount) },
    { term: 'slab thickness', text: formatLength(s.thickness, unit) },
    { term: 'extents', text: `${formatLength(e.uMax - e.uMin, unit)} along u \u00d7 ${formatLength(e.vMax - e.vMin, unit)} along v` },
    { term: 'area of the points', text: formatArea(s.area, unit) },
    { term: 'point spacing', text: formatUncertainty(s.spacing, unit) },
  ]
  const o = s.opening
  if (o) {
    out.push(
      { term: 'clear width', text: withU(o.clearWidth, o.uncertainty.width, unit) },
      { term: 'clear height', text: withU(o.clearHeight, o.uncertainty.height, unit) },
      { term: 'opening area', text: formatArea(o.area, unit) },
    )
  } else if (s.openingProblem) {
    out.push({ term: 'opening', text: s.openingProblem })
  }
  return out
}

const opts = (o: Record<string, unknown>) => o as unknown as SectionOptions

/**
 * A section marker: two clicks (an upright plane) or three (any plane), or a plane typed in by numbers; its
 * slab thickness, and whether to look for the free opening (whose clear width is then its value).
 */
export const sectionUi: MarkerKindUi<'section'> = {
  kind: 'section',
  title: 'Section marker',
  icon: ICONS.kindSection,
  colour: '#C7A0E8',
  tool: SECTION_TOOL,
  options: (): SectionOptions & Record<string, unknown> => ({ plane: 'two-points', thickness: SECTION_THICKNESS.default, opening: true }),
  restartOn: ['plane'],
  clicks: (o) => (opts(o).plane === 'two-points' ? 2 : 3),
  hint: (count, o) => sectionHint(count, opts(o).plane),
  problem: (picks, o) => sectionProblem(picks, opts(o).plane),
  panel: {
    component: defineAsyncComponent(() => import('./SectionPanel.vue')),
    bind: ({ tools, unit, placements }, ui) => {
      const o = opts(tools.options)
      return {
        toolKey: ui.tool.key,
        hint: tools.hint,
        count: tools.count,
        needed: tools.needed,
        ready: tools.ready,
        problem: tools.problem,
        plane: o.plane,
        thickness: o.thickness,
        opening: o.opening,
        unit,
        saving: tools.saving,
        error: tools.error,
        placements,
        start: tools.picks[0]?.point ?? null,
        onPlane: (p: SectionOptions['plane']) => (tools.options.plane = p),
        onThickness: (t: number) => (tools.options.thickness = t),
        onOpening: (v: boolean) => (tools.options.opening = v),
        onCreate: () => (tools.ready && !tools.problem ? tools.save(sectionBody(tools.picks, o)) : null),
        onCreateNumbers: (plane: { origin: Vec3; normal: Vec3; instanceIds: string[] }) => tools.save(sectionNumbersBody(plane, o)),
        onCancel: tools.cancel,
      }
    },
  },
  draw(marker, points, colour) {
    const s = resultOf(marker.check, 'section')
    if (s && marker.check.state !== 'pending') {
      const rect = sectionRectangle(s.frame, s.extents)
      const strokes = [{ points: rect, closed: true, color: colour }]
      if (s.opening) strokes.push({ points: ringInPlane(s.frame, s.opening.outline), closed: true, color: BRICK })
      return { strokes, fill: { points: rect, color: colour }, at: planePoint(s.frame, (s.extents.uMin + s.extents.uMax) / 2, s.extents.vMax), flat: true }
    }
    return { strokes: points.length >= 2 ? [{ points: [...points], closed: points.length === 3, color: colour, dashed: true }] : [], at: null }
  },
  drawPreview: (points, colour) => ({ strokes: points.length >= 2 ? [{ points: [...points], closed: points.length === 3, color: colour, dashed: true }] : [], at: null }),
  labelPrefix: (marker) => (marker.check.unit === 'm2' ? 'area ' : 'clear width '),
  caption: (marker: Marker) => (resultOf(marker.check, 'section')?.opening ? 'clear width of the opening' : 'area of the section'),
  facts(marker, { unit }) {
    const s = resultOf(marker.check, 'section')
    return s ? sectionFigureFacts(s, unit) : []
  },
  figure: (marker) => {
    const s = resultOf(marker.check, 'section')
    return s ? { section: s, clearance: null } : null
  },
  checkedWords: 'The slab holds enough stored points for an outline; the values are computed from them.',
}
