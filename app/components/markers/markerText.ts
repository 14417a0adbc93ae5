/**
 * How markers read in the drawer: kind words and icons, state looks, values with their uncertainty in the
 * reader's unit, table rows and filters. Values come from the API in metres, degrees or square metres
 * (check.unit); uncertainties in parts are standard (k = 1), check.expandedUncertainty is k = 2.
 */
import { CHECK_STATE_LOOK, CHECK_STATES, CLEARANCE_LOOK, REVIEW_LOOK, REVIEW_STATES, type CheckState, type ClearanceOutcome, type ReviewState, type StateLook } from '@shared/collab/states'
import { formatArea, formatDegrees, formatLength, formatUncertainty, formatWithUncertainty, type LengthUnit } from '@shared/format/units'
import { MARKER_KINDS, type Instance, type Marker, type MarkerKind, type Vec3 } from '@shared/schemas'
import type { IconName } from '@/components/base/icons'

export const KIND_WORDS: Record<MarkerKind, string> = { distance: 'distance', angle: 'angle', section: 'section', clearance: 'clearance' }
export const KIND_ICONS: Record<MarkerKind, IconName> = { distance: 'kindDistance', angle: 'kindAngle', section: 'kindSection', clearance: 'kindClearance' }
/** The kinds' viewport colours (the brand palette in app/plugins/theme.ts), for drawing on the charcoal chip only: they are too light for white. */
export const KIND_COLORS: Record<MarkerKind, string> = { distance: '#F2B134', angle: '#7FC8C2', section: '#C7A0E8', clearance: '#F08A5D' }

export type AnyState = CheckState | ClearanceOutcome | ReviewState

/** The three state tables share no code, so one lookup serves every mark. */
const LOOKS: Record<AnyState, StateLook> = { ...CHECK_STATE_LOOK, ...CLEARANCE_LOOK, ...REVIEW_LOOK }

export function lookOf(state: AnyState): StateLook {
  return LOOKS[state]
}

/** The caution shown beside every clearance result (DESIGN section 11). */
export { CLEARANCE_CAUTION } from '@shared/format/cautions'

export type ValueKind = 'length' | 'angle' | 'area'

/** What the check's value measures: its stated unit, else what the kind gives. */
export function valueKindOf(marker: Marker): ValueKind {
  const unit = marker.check.unit
  if (unit === 'deg') return 'angle'
  if (unit === 'm2') return 'area'
  if (unit === 'm') return 'length'
  return marker.kind === 'angle' ? 'angle' : 'length'
}

/** A single quantity in the value's own kind (no uncertainty): for breakdowns and parts. */
export function formatQuantity(value: number | null | undefined, kind: ValueKind, unit: LengthUnit): string {
  if (kind === 'angle') return formatDegrees(value, 2)
  if (kind === 'area') return formatArea(value, unit)
  return formatLength(value, unit)
}

/** A standard uncertainty (k = 1) of a part, in the value's own kind. */
export function formatPart(u: number | null | undefined, kind: ValueKind, unit: LengthUnit): string {
  if (kind === 'angle') return formatDegrees(u, 3)
  if (kind === 'area') return u === null || u === undefined || !Number.isFinite(u) ? '\u2014' : `${u.toFixed(4)} m\u00b2`
  return formatUncertainty(u, unit)
}

/** "0.912 m ± 4.0 mm (k = 2)", "88.40° ± 0.12° (k = 2)", "1.204 m²"; a dash while there is no value. */
export function valueText(marker: Marker, unit: LengthUnit): string {
  const c = marker.check
  return formatWithUncertainty(c.value, c.expandedUncertainty, valueKindOf(marker), unit, c.coverageFactor)
}

/** The expanded uncertainty alone in the value's kind, or null where there is none to state. */
export function uncertaintyShort(marker: Marker, unit: LengthUnit): string | null {
  const c = marker.check
  const kind = valueKindOf(marker)
  if (c.value === null || kind === 'area' || c.expandedUncertainty === null) return null
  return kind === 'angle' ? formatDegrees(c.expandedUncertainty, 2) : formatUncertainty(c.expandedUncertainty, unit)
}

/** The table's shorter form, its header saying "± U (k = 2)": "0.912 m ± 4.0 mm". */
export function valueShort(marker: Marker, unit: LengthUnit): string {
  const c = marker.check
  if (c.value === null) return '\u2014'
  const value = formatQuantity(c.value, valueKindOf(marker), unit)
  const u = uncertaintyShort(marker, unit)
  return u === null ? value : `${value} \u00b1 ${u}`
}

/** What a value is, in words, for the card's caption. */
export function valueCaption(marker: Marker): string {
  if (marker.kind === 'clearance') return 'smallest margin'
  if (marker.kind === 'section') return marker.check.section?.opening ? 'clear width of the opening' : 'area of the section'
  if (marker.kind === 'angle') return 'angle at the vertex'
  return 'distance between the anchors'
}

export function placementName(instances: readonly Instance[], instanceId: string | null | undefined): string {
  if (!instanceId) return '\u2014'
  return instances.find((i) => i.id === instanceId)?.scanName ?? 'a removed placement'
}

/** Scene-frame coordinates: "x 1.204 m, y −0.330 m, z 2.100 m". */
export function formatPoint(p: Vec3 | readonly number[] | null | undefined, unit: LengthUnit, axes: readonly string[] = ['x', 'y', 'z']): string {
  if (!p) return '\u2014'
  return p.map((c, i) => `${axes[i] ?? ''} ${formatLength(c, unit)}`.trim()).join(', ')
}

export interface MarkerRow {
  id: string
  kind: MarkerKind
  kindWord: string
  label: string
  /** Sort key: the value in its API unit (null last). */
  value: number | null
  valueText: string
  /** The expanded uncertainty (k = 2) alone, or null (areas, no value yet). */
  uncertaintyText: string | null
  state: CheckState
  /** Sort key: the states' order in CHECK_STATES. */
  stateOrder: number
  outcome: ClearanceOutcome | null
  author: string
  review: ReviewState
  /** Sort key: the review states' order in REVIEW_STATES. */
  reviewOrder: number
  /** Comment threads still open (0: none, or all resolved). */
  openThreads: number
}

export function markerRow(marker: Marker, unit: LengthUnit): MarkerRow {
  const c = marker.check
  const outcome = c.clearance?.outcome ?? null
  return {
    id: marker.id,
    kind: marker.kind,
    kindWord: KIND_WORDS[marker.kind],
    label: marker.label,
    value: c.value,
    valueText: c.value === null ? '\u2014' : formatQuantity(c.value, valueKindOf(marker), unit),
    uncertaintyText: uncertaintyShort(marker, unit),
    state: c.state,
    stateOrder: CHECK_STATES.indexOf(c.state),
    outcome,
    author: marker.createdBy?.name ?? 'former member',
    review: marker.review.state,
    reviewOrder: REVIEW_STATES.indexOf(marker.review.state),
    openThreads: marker.comments.open,
  }
}

export interface MarkerFilter {
  /** Empty: every kind. */
  kinds: readonly MarkerKind[]
  /** Empty: every state. */
  states: readonly CheckState[]
  /** Empty (or left out): every review state. */
  reviews?: readonly ReviewState[]
}

/** The markers that match every filter given (an empty list lets all through). */
export function filterMarkers(markers: readonly Marker[], filter: MarkerFilter): Marker[] {
  const reviews = filter.reviews ?? []
  return markers.filter(
    (m) =>
      (filter.kinds.length === 0 || filter.kinds.includes(m.kind)) &&
      (filter.states.length === 0 || filter.states.includes(m.check.state)) &&
      (reviews.length === 0 || reviews.includes(m.review.state)),
  )
}

export const KIND_OPTIONS = MARKER_KINDS.map((k) => ({ value: k, label: KIND_WORDS[k] }))
export const STATE_OPTIONS = CHECK_STATES.map((s) => ({ value: s, label: CHECK_STATE_LOOK[s].word }))
export const REVIEW_OPTIONS = REVIEW_STATES.map((s) => ({ value: s, label: REVIEW_LOOK[s].word }))

/** One anchor's residual against its tolerance: "1.2 mm ≤ 5.0 mm" (the word on/off the points goes beside it). */
export function residualText(residual: number | null, tolerance: number, unit: LengthUnit): string {
  if (residual === null) return `no stored point (tolerance ${formatUncertainty(tolerance, unit)})`
  return `${formatUncertainty(residual, unit)} ${residual <= tolerance ? '\u2264' : '>'} ${formatUncertainty(tolerance, unit)}`
}
