/**
 * From markers (as the API gives them) to what the viewport draws: strokes, a fill, anchor dots and a label,
 * all in the scene frame (metres, Z up). The viewer (viewer/markerLayer.ts) draws these shapes and knows
 * nothing of marker kinds; the words and colours are decided here, from the contract and Spanmark's own words and colours.
 * Pure functions, unit-tested.
 */
import { checkOutcome, kindWord, type Marker, type MarkerKind } from '@shared/schemas'
import { CHECK_STATE_LOOK, CLEARANCE_LOOK } from '@shared/collab/states'
import type { LengthUnit } from '@shared/format/units'
import { KIND_COLORS } from '@/components/markers/markerText'
import { valueText } from '@/components/markers/markerValues'
import { kindUi } from '@/kinds'
import type { MarkerLabelView, MarkerView } from '@/viewer/markerLayer'
import type { Vec3 } from '@/viewer/types'
import { BRICK, centroid } from './markerShapes'

// The plane shapes, as the tests and older callers read them from here.
export { arcPoints, BRICK, planePoint, ringInPlane, sectionRectangle } from './markerShapes'

/** Marker kinds in the viewport (Spanmark's own), as the drawer's chips show them. */
export const MARKER_KIND_COLOURS: Record<MarkerKind, string> = KIND_COLORS
export const PREVIEW_ID = '__preview'

/** Where an anchor is drawn: its stored point when it snapped within tolerance, else where it was picked. */
export function anchorDots(marker: Marker): { at: Vec3; offScan: boolean }[] {
  return marker.anchors.map((anchor, i) => {
    const checked = marker.check.anchors[i]
    const picked: Vec3 = [anchor.x, anchor.y, anchor.z]
    if (!checked || marker.check.state === 'pending') return { at: picked, offScan: false }
    if (!checked.onScan || !checked.snapped) return { at: checked.picked, offScan: true }
    return { at: checked.snapped, offScan: false }
  })
}

/** The label's value line and its state: the contract's words, values as Spanmark writes them. */
export function markerLabel(marker: Marker, lengthUnit: LengthUnit): Omit<MarkerLabelView, 'at'> {
  const check = marker.check
  const look = CHECK_STATE_LOOK[check.state]
  const ui = kindUi(marker.kind)
  const title = marker.label.trim() || kindWord(marker.kind)
  if (check.state === 'pending') return { title, value: look.word, state: look }
  const value = check.value === null ? '\u2014' : (ui.labelPrefix?.(marker) ?? '') + valueText(marker, lengthUnit)
  const outcome = checkOutcome(check)
  if (check.state === 'checked' && outcome) return { title, value, state: CLEARANCE_LOOK[outcome] }
  return { title, value, state: look }
}

/** One marker as the viewport draws it: the anchors' dots, then what its kind draws (app/kinds/<kind>). */
export function markerView(marker: Marker, lengthUnit: LengthUnit): MarkerView {
  const ui = kindUi(marker.kind)
  const colour = ui.colour
  const dots = anchorDots(marker).map((d) => ({ at: d.at, color: d.offScan ? BRICK : colour, hollow: d.offScan }))
  const points = dots.map((d) => d.at)
  const drawn = ui.draw(marker, points, colour)
  // Flat shapes (a section's rectangle, a clearance's silhouette): the label stands over their top; lines
  // and arcs: on the line or just outside the arc.
  const at = drawn.at ?? (points.length ? centroid(points) : null)
  const label = at ? { at, placement: drawn.flat && marker.check.state !== 'pending' ? ('above' as const) : ('centre' as const), ...markerLabel(marker, lengthUnit) } : null
  return { id: marker.id, color: colour, strokes: drawn.strokes, fill: drawn.fill ?? null, dots, label }
}

/** The marker being placed: the points so far and the cursor, dashed, with the preview value if any. */
export function previewView(kind: MarkerKind, points: readonly Vec3[], value: string | null): MarkerView | null {
  if (points.length === 0) return null
  const ui = kindUi(kind)
  const colour = ui.colour
  const drawn = ui.drawPreview?.(points, colour) ?? { strokes: points.length >= 2 ? [{ points: [...points], closed: false, color: colour, dashed: true }] : [], at: null }
  return {
    id: PREVIEW_ID,
    color: colour,
    strokes: drawn.strokes,
    fill: null,
    dots: points.map((p) => ({ at: p, color: colour, hollow: false })),
    label: value ? { at: drawn.at ?? centroid(points), title: 'preview, not saved yet', value, state: null } : null,
  }
}
