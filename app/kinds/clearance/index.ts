import { defineAsyncComponent } from 'vue'
import { formatDegrees, formatLength } from '@shared/format/units'
import { resultOf } from '@shared/schemas'
import { ICONS } from '@/components/base/icons'
import { uv, withU, type Fact } from '@/components/markers/markerFacts'
import { placementName } from '@/components/markers/markerValues'
import { planePoint, ringInPlane, topOf } from '@/components/viewer/markerShapes'
import { formatCount } from '@/lib/format'
import type { MarkerKindUi } from '../types'
import { clearanceBody, type ClearanceOptions } from './placing'

const CARRIAGE_WORDS = { floor: 'resting on the floor', trolley: 'on a trolley or skates', carried: 'carried, free in the opening' } as const

/**
 * A clearance: which placement passes through which section's free opening, with what margin. No clicks: its
 * panel names the object and the section. Its card carries the caution on moving heavy objects.
 */
export const clearanceUi: MarkerKindUi<'clearance'> = {
  kind: 'clearance',
  title: 'Clearance',
  icon: ICONS.kindClearance,
  colour: '#F08A5D',
  tool: { id: 'clearance', key: 'C', label: 'Clearance: an object through an opening' },
  clicks: () => 0,
  hint: () => 'Choose the object and a section with an opening, then check.',
  panel: {
    component: defineAsyncComponent(() => import('./ClearancePanel.vue')),
    bind: ({ tools, unit, placements, objects, markers, requiredMargin, likelyPlacementId }, ui) => ({
      toolKey: ui.tool.key,
      hint: tools.hint,
      placements,
      objects,
      markers,
      defaultMargin: requiredMargin,
      preferredPlacementId: likelyPlacementId,
      unit,
      saving: tools.saving,
      error: tools.error,
      onCheck: (options: ClearanceOptions) => tools.save(clearanceBody(options)),
    }),
  },
  draw(marker, _points, colour) {
    const c = resultOf(marker.check, 'clearance')
    if (!c || marker.check.state === 'pending') return { strokes: [], at: null }
    const [su, sv] = c.nearest.silhouettePoint
    const [bu, bv] = c.nearest.boundaryPoint
    return {
      strokes: [
        { points: ringInPlane(c.frame, c.silhouette), closed: true, color: colour },
        { points: [planePoint(c.frame, su, sv), planePoint(c.frame, bu, bv)], closed: false, color: colour, dashed: true },
      ],
      at: topOf(c.frame, c.silhouette),
      flat: true,
    }
  },
  labelPrefix: () => 'margin ',
  caption: () => 'smallest margin',
  facts(marker, { markers, instances, objects, unit }) {
    const c = resultOf(marker.check, 'clearance')
    const params = marker.params as { objectId?: string; objectInstanceId?: string; sectionMarkerId?: string; alsoThrough?: string[] }
    const labelOf = (id: string | undefined) => markers.find((m) => m.id === id)?.label ?? 'a removed section'
    // A clearance names an object; an older one names a placement, read as an object of that one placement.
    const objectText = params.objectId !== undefined ? (objects?.find((o) => o.id === params.objectId)?.name ?? 'a removed object') : placementName(instances, params.objectInstanceId)
    const out: Fact[] = [
      { term: 'object', text: objectText },
      { term: 'through', text: [params.sectionMarkerId, ...(params.alsoThrough ?? [])].map(labelOf).join(', then ') },
    ]
    if (!c) return out
    out.push(
      { term: 'smallest margin', text: withU(c.margin, marker.check.expandedUncertainty, unit) },
      { term: 'required margin', text: formatLength(c.requiredMargin, unit) },
      ...(c.orientation
        ? [
            { term: 'best way through', text: c.orientation.words },
            { term: 'as it stands', text: `${formatLength(c.orientation.asItStands, unit)} (the search's grid value)` },
          ]
        : [{ term: 'best turn in the plane', text: formatDegrees(c.rotationDegrees, 1) }]),
      ...(c.carriage ? [{ term: 'moved', text: CARRIAGE_WORDS[c.carriage.mode] + (c.carriage.mode === 'floor' || c.carriage.floorFound ? '' : ' (no floor found under the opening)') }] : []),
      { term: 'where (object)', text: uv(c.nearest.silhouettePoint, unit) },
      { term: 'where (opening)', text: uv(c.nearest.boundaryPoint, unit) },
      { term: 'object points', text: formatCount(c.objectPointCount) },
    )
    return out
  },
  figure: (marker) => {
    const c = resultOf(marker.check, 'clearance')
    return c ? { section: c.section, clearance: c } : null
  },
  checkedWords: 'The opening and the object’s points were both found; the fit is computed from them.',
  caution: {
    component: defineAsyncComponent(() => import('./ClearanceCaution.vue')),
    props: (marker) => ({ assumptions: resultOf(marker.check, 'clearance')?.assumptions ?? [] }),
  },
}
