/**
 * How markers read in the drawer: kind words and icons, state looks, values with their uncertainty in the
 * reader's unit, table rows and filters. Values come from the API in metres, degrees or square metres
 * (check.unit); uncertainties in parts are standard (k = 1), check.expandedUncertainty is k = 2.
 */
import { CHECK_STATE_LOOK, CHECK_STATES, CLEARANCE_LOOK, REVIEW_LOOK, REVIEW_STATES, type CheckState, type ClearanceOutcome, type ReviewState, type StateLook } from '@shared/collab/states'
import type { LengthUnit } from '@shared/format/units'
import { checkOutcome, kindWord, MARKER_KINDS, type Marker, type MarkerKind } from '@shared/schemas'
import type { IconSource } from '@/components/base/icons'
import { kindUi } from '@/kinds'
import { formatQuantity, uncertaintyShort, valueKindOf } from './markerValues'

export * from './markerValues'

/** Each kind's word, icon and viewport colour (its module in app/kinds; the colours are for the charcoal chip only: too light for white). */
export const KIND_WORDS = Object.fromEntries(MARKER_KINDS.map((k) => [k, kindWord(k)])) as Record<MarkerKind, string>
export const KIND_ICONS = Object.fromEntries(MARKER_KINDS.map((k) => [k, kindUi(k).icon])) as Record<MarkerKind, IconSource>
export const KIND_COLORS = Object.fromEntries(MARKER_KINDS.map((k) => [k, kindUi(k).colour])) as Record<MarkerKind, string>

export type AnyState = CheckState | ClearanceOutcome | ReviewState

/** The three state tables share no code, so one lookup serves every mark. */
const LOOKS: Record<AnyState, StateLook> = { ...CHECK_STATE_LOOK, ...CLEARANCE_LOOK, ...REVIEW_LOOK }

export function lookOf(state: AnyState): StateLook {
  return LOOKS[state]
}


/** What a value is, in words, for the card's caption. */
export function valueCaption(marker: Marker): string {
  return kindUi(marker.kind).caption(marker)
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
  const outcome = checkOutcome(c)
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

