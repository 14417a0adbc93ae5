import { defineAsyncComponent } from 'vue'
import { formatCount } from '@/lib/format'
import { resultOf } from '@shared/schemas'
import type { SizeResult } from '@shared/kinds/size'
import { withU, type Fact } from '@/components/markers/markerFacts'
import type { Vec3 } from '@/viewer/types'
import type { KindDrawing, MarkerKindUi } from '../types'

/** A box with a dimension line along its base. */
const SIZE_ICON = ['M2.5 5.5l3-3h8v8l-3 3h-8z', 'M2.5 5.5h8v8M10.5 5.5l3-3', 'M2.5 15.2h8']

/** The box's twelve edges, scene frame, as four strokes (bottom ring, top ring, and the four uprights in pairs). */
function boxStrokes(r: SizeResult, colour: string): KindDrawing['strokes'] {
  const { centre, axes, size } = r.box
  const corner = (a: number, b: number, c: number): Vec3 => [0, 1, 2].map((k) => centre[k]! + (a * size[0] * axes[0][k]!) / 2 + (b * size[1] * axes[1][k]!) / 2 + (c * size[2] * axes[2][k]!) / 2) as Vec3
  const ring = (c: number): Vec3[] => [corner(-1, -1, c), corner(1, -1, c), corner(1, 1, c), corner(-1, 1, c)]
  return [
    { points: ring(-1), closed: true, color: colour },
    { points: ring(1), closed: true, color: colour },
    { points: [corner(-1, -1, -1), corner(-1, -1, 1), corner(1, -1, 1), corner(1, -1, -1)], closed: false, color: colour },
    { points: [corner(-1, 1, -1), corner(-1, 1, 1), corner(1, 1, 1), corner(1, 1, -1)], closed: false, color: colour },
  ]
}

const SizeFigure = defineAsyncComponent(() => import('./SizeFigure.vue'))

const CURVED_WORDS = { length: 'length', width: 'width', top: 'top' } as const

/**
 * The sizes of an object: length, width and height of the box its points fill, each with its U. No clicks: the
 * panel lists the scene's objects. Key Z, the letter in the middle of the word (S being the section's).
 */
export const sizeUi: MarkerKindUi<'size'> = {
  kind: 'size',
  title: 'Size',
  icon: SIZE_ICON,
  colour: '#9CCB6B',
  tool: { id: 'size', key: 'Z', label: 'Size: the length, width and height of an object' },
  clicks: () => 0,
  hint: () => 'Choose an object of the scene, then measure its length, width and height.',
  panel: {
    component: defineAsyncComponent(() => import('./SizePanel.vue')),
    bind: ({ tools }, ui) => ({
      toolKey: ui.tool.key,
      icon: ui.icon,
      hint: tools.hint,
      saving: tools.saving,
      error: tools.error,
      onMeasure: (objectId: string) => tools.save({ kind: 'size', anchors: [], params: { objectId } }),
    }),
  },
  draw(marker, _points, colour) {
    const r = resultOf(marker.check, 'size')
    if (!r || marker.check.state === 'pending') return { strokes: [], at: null }
    const [cx, cy, cz] = r.box.centre
    return { strokes: boxStrokes(r, colour), at: [cx, cy, cz + r.box.size[2] / 2] }
  },
  labelPrefix: () => 'length ',
  caption: () => 'length of the object (its longer level side)',
  facts(marker, { unit }) {
    const r = resultOf(marker.check, 'size')
    if (!r) return []
    const out: Fact[] = [
      { term: 'object', text: r.objectName },
      { term: 'length', text: withU(r.length.value, r.length.U, unit) },
      { term: 'width', text: withU(r.width.value, r.width.U, unit) },
      { term: 'height', text: withU(r.height.value, r.height.U, unit) },
      { term: 'height from', text: r.floor.found ? 'the floor it stands on (fitted)' : 'its own lowest points (no floor found)' },
      { term: 'object points', text: formatCount(r.objectPointCount) },
    ]
    if (r.curved.length) out.push({ term: 'curved', text: `${r.curved.map((c) => CURVED_WORDS[c]).join(', ')}: across the outermost part of the fitted curve` })
    return out
  },
  figure(marker) {
    const r = resultOf(marker.check, 'size')
    return r ? { component: SizeFigure, props: { size: r } } : null
  },
  checkedWords: 'The object’s kept points were measured: each face fitted to the points beside it.',
}
