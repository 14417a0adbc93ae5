import { formatLength, type LengthUnit } from '@shared/format/units'
import type { ReviewState } from '@shared/collab/states'
import type { MarkerRevision } from '@shared/schemas'

/** What the screen calls each recorded action (a review's own words by state: actionText). */
export const ACTION_WORDS: Record<MarkerRevision['action'], string> = {
  created: 'placed',
  edited: 'changed',
  deleted: 'deleted',
  restored: 'restored an earlier version',
  reviewed: 'reviewed',
  reopened: 'reopened its review with a change',
}

/** A reviewer's action in the words of the review states (shared/collab/states.ts). */
const REVIEW_WORDS: Record<ReviewState, string> = {
  'signed-off': 'signed it off',
  'changes-asked': 'asked for changes',
  open: 'set its review back to open',
}

/** What a version's person did, in words: "placed", "signed it off", "asked for changes". */
export function actionText(r: Pick<MarkerRevision, 'action' | 'reviewState'>): string {
  if (r.action === 'reviewed' && r.reviewState) return REVIEW_WORDS[r.reviewState]
  return ACTION_WORDS[r.action]
}

/** Review versions change no geometry: they may not be restored, and say their note instead of a change. */
export function isReviewAction(action: MarkerRevision['action']): boolean {
  return action === 'reviewed' || action === 'reopened'
}

/** The largest distance any anchor moved between two versions (metres), or null when their anchors differ in number. */
export function largestMove(before: MarkerRevision['state'], after: MarkerRevision['state']): number | null {
  if (before.anchors.length !== after.anchors.length) return null
  let most = 0
  before.anchors.forEach((a, i) => {
    const b = after.anchors[i]!
    most = Math.max(most, Math.hypot(b.x - a.x, b.y - a.y, b.z - a.z))
  })
  return most
}

/**
 * What a version changed against the one before it, in words: the label, how far anchors moved (under a
 * tenth of a millimetre counts as not moved), and whether the settings (plane, slab, margin...) changed.
 */
export function changeSummary(before: MarkerRevision | undefined, after: MarkerRevision, unit: LengthUnit): string {
  if (after.action === 'reviewed') return after.note ? `“${after.note}”` : ''
  if (after.action === 'reopened') return after.note ?? ''
  if (!before || after.action === 'created') return `as “${after.state.label}”`
  if (after.action === 'deleted') return ''
  const parts: string[] = []
  if (before.state.label !== after.state.label) parts.push(`label “${before.state.label}” → “${after.state.label}”`)
  const moved = largestMove(before.state, after.state)
  if (moved === null) parts.push('anchors replaced')
  else if (moved >= 1e-4) parts.push(`anchors moved up to ${formatLength(moved, unit)}`)
  if (JSON.stringify(before.state.params) !== JSON.stringify(after.state.params)) parts.push('settings changed')
  return parts.length ? parts.join('; ') : 'no change to its geometry or label'
}
