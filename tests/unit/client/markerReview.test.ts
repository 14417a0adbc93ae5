// The drawer's review and comment helpers: the review filter and column of the markers table, the history's
// words for review versions, and what makes a marker's threads be fetched again. The words are Spanmark's own
// (review states open, changes asked, signed off); the rules are the product's own (server/markers/README.md, "Comments and review").
import { describe, expect, it } from 'vitest'
import { REVIEW_STATES } from '@shared/collab/states'
import type { MarkerRevision } from '@shared/schemas'
import { commentsVersion } from '@/composables/useMarkerComments'
import { actionText, changeSummary, isReviewAction } from '@/components/markers/markerHistory'
import { filterMarkers, markerRow, REVIEW_OPTIONS } from '@/components/markers/markerText'
import { check, marker } from './factories'

const reviewer = { id: '30000000-0000-4000-8000-000000000009', name: 'Maren Holt' }
const open = marker({ label: 'Door width' })
const signed = marker({ label: 'Head height', review: { state: 'signed-off', by: reviewer, at: '2026-03-02T11:00:00.000Z', note: null } })
const asked = marker({ kind: 'angle', label: 'Jamb angle', review: { state: 'changes-asked', by: reviewer, at: '2026-03-02T11:05:00.000Z', note: 'Pick the jamb lower.' } })
const pendingSigned = marker({ label: 'Moved after sign-off', check: check({ state: 'pending' }), review: { state: 'signed-off', by: reviewer, at: '2026-03-02T11:00:00.000Z', note: null } })
const all = [open, signed, asked, pendingSigned]

describe('the markers table by review state', () => {
  it('offers the three review states in Spanmark’s own words, in order', () => {
    expect(REVIEW_OPTIONS).toEqual([
      { value: 'open', label: 'open' },
      { value: 'changes-asked', label: 'changes asked' },
      { value: 'signed-off', label: 'signed off' },
    ])
  })

  it('filters by review state, alone and with the other filters; none given means every one', () => {
    expect(filterMarkers(all, { kinds: [], states: [] })).toEqual(all)
    expect(filterMarkers(all, { kinds: [], states: [], reviews: [] })).toEqual(all)
    expect(filterMarkers(all, { kinds: [], states: [], reviews: ['signed-off'] })).toEqual([signed, pendingSigned])
    expect(filterMarkers(all, { kinds: [], states: [], reviews: ['open'] })).toEqual([open])
    expect(filterMarkers(all, { kinds: [], states: [], reviews: ['open', 'changes-asked'] })).toEqual([open, asked])
    expect(filterMarkers(all, { kinds: [], states: ['checked'], reviews: ['signed-off'] })).toEqual([signed])
    expect(filterMarkers(all, { kinds: ['angle'], states: [], reviews: ['signed-off'] })).toEqual([])
  })

  it('sorts the review column in REVIEW_STATES order and counts open threads', () => {
    expect(all.map((m) => markerRow(m, 'm').reviewOrder)).toEqual([0, 2, 1, 2])
    expect(REVIEW_STATES.indexOf('changes-asked')).toBe(1)
    const discussed = marker({ comments: { threads: 3, open: 2, count: 7, lastAt: '2026-03-02T12:00:00.000Z' } })
    expect(markerRow(discussed, 'm')).toMatchObject({ review: 'open', openThreads: 2 })
    // A marker frozen before reviews existed reads as open, uncommented.
    expect(open.review).toEqual({ state: 'open', by: null, at: null, note: null })
    expect(open.comments).toEqual({ threads: 0, open: 0, count: 0, lastAt: null })
  })
})

describe('review versions in the history', () => {
  const base: MarkerRevision = {
    id: '1',
    markerId: open.id,
    revision: 1,
    action: 'created',
    state: { kind: 'distance', label: 'Door width', anchors: [], params: {} },
    by: reviewer,
    at: '2026-03-02T10:00:00.000Z',
    reviewState: null,
    note: null,
  }
  const rev = (over: Partial<MarkerRevision>): MarkerRevision => ({ ...base, ...over })

  it('says what the reviewer did, in the review states’ words', () => {
    expect(actionText(rev({ action: 'reviewed', reviewState: 'signed-off' }))).toBe('signed it off')
    expect(actionText(rev({ action: 'reviewed', reviewState: 'changes-asked' }))).toBe('asked for changes')
    expect(actionText(rev({ action: 'reviewed', reviewState: 'open' }))).toBe('set its review back to open')
    expect(actionText(rev({ action: 'reopened', reviewState: 'open' }))).toBe('reopened its review with a change')
    expect(actionText(rev({ action: 'edited' }))).toBe('changed')
  })

  it('shows the note instead of a geometry change, and offers no restore for review versions', () => {
    expect(changeSummary(base, rev({ id: '2', action: 'reviewed', reviewState: 'changes-asked', note: 'Pick the jamb lower.' }), 'm')).toBe('“Pick the jamb lower.”')
    expect(changeSummary(base, rev({ id: '2', action: 'reviewed', reviewState: 'signed-off' }), 'm')).toBe('')
    expect(changeSummary(base, rev({ id: '2', action: 'reopened', reviewState: 'open', note: 'Its anchors or settings changed after the sign-off.' }), 'm')).toBe(
      'Its anchors or settings changed after the sign-off.',
    )
    expect(['reviewed', 'reopened'].every((a) => isReviewAction(a as MarkerRevision['action']))).toBe(true)
    expect(isReviewAction('edited')).toBe(false)
  })
})

describe('comments arriving live', () => {
  it('fetches a marker’s threads again whenever its comment summary moves, and only then', () => {
    const before = marker({ comments: { threads: 1, open: 1, count: 2, lastAt: '2026-03-02T12:00:00.000Z' } })
    const replied = { ...before, comments: { ...before.comments, count: 3, lastAt: '2026-03-02T12:01:00.000Z' } }
    const resolved = { ...before, comments: { ...before.comments, open: 0 } }
    const rechecked = { ...before, check: check({ value: 1.5 }) }
    expect(commentsVersion(replied)).not.toBe(commentsVersion(before))
    expect(commentsVersion(resolved)).not.toBe(commentsVersion(before))
    expect(commentsVersion(rechecked)).toBe(commentsVersion(before))
  })
})
