import { z } from 'zod'
import { CHECK_STATES, REVIEW_STATES, type ClearanceOutcome } from '../collab/states'
import { KindResult, MARKER_KINDS, MAX_ANCHORS } from '../kinds'
import { Anchor, CheckPart, MarkerLabel, Vec3 } from './anchor'
import { Id, Timestamp } from './common'
import { Earlier } from './paging'

/**
 * Markers: the API contract. Anchors come in and go out in the scene frame (metres, Z up); the server stores
 * them in their placement's own frame, so moving a placement moves its markers. What differs by kind (params,
 * the create body, the check's result) lives in shared/kinds/<kind>/.
 */

export * from '../kinds'
export * from './anchor'

/** Anchor tolerance limits, metres (a project may set its own; otherwise max(3 x spacing, 5 mm)). */
export const TOLERANCE_LIMITS = { min: 0.001, max: 0.5, floor: 0.005, spacingFactor: 3 } as const

/** The kind cannot change; anchors and params are replaced whole and checked against the kind. */
export const MarkerUpdateBody = z
  .object({ label: MarkerLabel, anchors: z.array(Anchor, { error: 'must be a list of anchors' }).max(MAX_ANCHORS, { error: `must be at most ${MAX_ANCHORS} anchors` }), params: z.record(z.string(), z.unknown()) })
  .partial()
  .strict()
  .refine((v) => v.label !== undefined || v.anchors !== undefined || v.params !== undefined, { error: 'give a label, anchors or params to change' })
export type MarkerUpdateBody = z.infer<typeof MarkerUpdateBody>

export const MarkerParams = z.object({ markerId: Id })

export const CheckedAnchor = z.object({
  instanceId: Id,
  /** As placed, scene frame. */
  picked: Vec3,
  /** The nearest stored point, scene frame (null when the placement or its scan is gone). */
  snapped: Vec3.nullable(),
  residual: z.number().nullable(),
  tolerance: z.number(),
  onScan: z.boolean(),
  /** Standard uncertainty per coordinate, metres, and its parts. */
  u: z.number().nullable(),
  parts: z.array(CheckPart),
})
export type CheckedAnchor = z.infer<typeof CheckedAnchor>

/**
 * Checks stored before kinds were modules kept one nullable slot per kind (distance, angle, section,
 * clearance; a clearance's section in `section`): read into `result`, so old rows, checkpoints and live
 * records still parse.
 */
function liftSlots(stored: unknown): unknown {
  if (!stored || typeof stored !== 'object' || 'result' in stored) return stored
  const { distance, angle, section, clearance, ...rest } = stored as Record<string, unknown>
  const result = clearance
    ? { kind: 'clearance', ...(clearance as object), section }
    : section
      ? { kind: 'section', ...(section as object) }
      : angle
        ? { kind: 'angle', ...(angle as object) }
        : distance
          ? { kind: 'distance', ...(distance as object) }
          : null
  return { ...rest, result }
}

export const Check = z.preprocess(
  liftSlots,
  z.object({
    state: z.enum(CHECK_STATES),
    /** Why, in words, when the state is not checked (or a note on a checked value). */
    reason: z.string().nullable(),
    /** Metres, degrees for an angle; a section's value is its clear width when it has an opening, else its area (m2). */
    value: z.number().nullable(),
    unit: z.enum(['m', 'deg', 'm2']).nullable(),
    standardUncertainty: z.number().nullable(),
    expandedUncertainty: z.number().nullable(),
    coverageFactor: z.literal(2),
    parts: z.array(CheckPart),
    anchors: z.array(CheckedAnchor),
    /** What the kind adds (shared/kinds/<kind>/): null while pending or when the check stopped with a reason. */
    result: KindResult.nullable(),
    checkedAt: Timestamp.nullable(),
    /** The marker revision this check was computed for. */
    basedOn: z.number().int(),
  }),
)
export type Check = z.infer<typeof Check>

/** The check's result when it is of this kind, else null (a section's figure: `resultOf(check, 'section')`). */
export function resultOf<K extends KindResult['kind']>(check: Pick<Check, 'result'>, kind: K): Extract<KindResult, { kind: K }> | null {
  return check.result?.kind === kind ? (check.result as Extract<KindResult, { kind: K }>) : null
}

/** A verdict the kind's result gives (a clearance: passes, does not pass, too close to call), or null. */
export function checkOutcome(check: Pick<Check, 'result'>): ClearanceOutcome | null {
  const r = check.result
  return r && 'outcome' in r ? r.outcome : null
}

/** A check with no result yet (pending), or the frame of one that stopped with a state and a reason. */
export function blankCheck(state: Check['state'], basedOn: number, reason: string | null = null, checkedAt: string | null = null): Check {
  return {
    state,
    reason,
    value: null,
    unit: null,
    standardUncertainty: null,
    expandedUncertainty: null,
    coverageFactor: 2,
    parts: [],
    anchors: [],
    result: null,
    checkedAt,
    basedOn,
  }
}

export const PersonRef = z.object({ id: Id, name: z.string() }).nullable()

/**
 * A marker's review (server/markers/README.md, "Comments and review"): open, changes-asked or signed-off, who set it and when, and
 * the note (the reviewer's, or why the server returned a signed-off marker to open). Never reviewed: open,
 * nobody, no time.
 */
export const MarkerReview = z.object({
  state: z.enum(REVIEW_STATES),
  by: PersonRef,
  at: Timestamp.nullable(),
  note: z.string().nullable(),
})
export type MarkerReview = z.infer<typeof MarkerReview>
export const openReview = (): MarkerReview => ({ state: 'open', by: null, at: null, note: null })

/** How many comment threads a marker has, how many are still open, and when the last comment came. */
export const CommentSummary = z.object({
  threads: z.number().int(),
  open: z.number().int(),
  count: z.number().int(),
  lastAt: Timestamp.nullable(),
})
export type CommentSummary = z.infer<typeof CommentSummary>
export const noComments = (): CommentSummary => ({ threads: 0, open: 0, count: 0, lastAt: null })

/** Notes are short: a reason, not a report. */
export const REVIEW_NOTE_MAX = 2000

export const MarkerReviewBody = z
  .object({
    state: z.enum(REVIEW_STATES, { error: `must be one of ${REVIEW_STATES.join(', ')}` }),
    note: z
      .string({ error: 'must be text' })
      .trim()
      .max(REVIEW_NOTE_MAX, { error: `must be at most ${REVIEW_NOTE_MAX} characters` })
      .transform((v) => (v === '' ? undefined : v))
      .optional(),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (v.state === 'changes-asked' && !v.note) ctx.addIssue({ code: 'custom', path: ['note'], message: 'say what should change: a note is required when asking for changes' })
  })
export type MarkerReviewBody = z.infer<typeof MarkerReviewBody>

export const Marker = z.object({
  id: Id,
  sceneId: Id,
  kind: z.enum(MARKER_KINDS),
  label: z.string(),
  /** Scene frame, with each placement's current transform applied. */
  anchors: z.array(Anchor),
  params: z.record(z.string(), z.unknown()),
  revision: z.number().int(),
  check: Check,
  createdBy: PersonRef,
  updatedBy: PersonRef,
  createdAt: Timestamp,
  updatedAt: Timestamp,
  /** Defaults keep markers frozen in checkpoints before reviews existed readable. */
  review: MarkerReview.default(openReview),
  comments: CommentSummary.default(noComments),
})
export type Marker = z.infer<typeof Marker>

export const MarkerList = z.object({ markers: z.array(Marker) })
export const MarkerResponse = z.object({ marker: Marker })

/** Project-wide marker settings (owners change them on the project page). */
export const MarkerSettings = z.object({
  /** Metres, or null for the default max(3 x the scan's mean spacing, 5 mm). */
  anchorTolerance: z.number().nullable(),
  requiredMargin: z.number(),
})
export type MarkerSettings = z.infer<typeof MarkerSettings>

/** 'reviewed': a reviewer set the review state; 'reopened': the server returned a signed-off marker to open. */
export const REVISION_ACTIONS = ['created', 'edited', 'deleted', 'restored', 'reviewed', 'reopened'] as const
export type RevisionAction = (typeof REVISION_ACTIONS)[number]

/** One settled edit of a marker: who, when, what, and the whole state (anchors in the scene frame). */
export const MarkerRevision = z.object({
  id: z.string(),
  markerId: Id,
  revision: z.number().int(),
  action: z.enum(REVISION_ACTIONS),
  state: z.object({ kind: z.enum(MARKER_KINDS), label: z.string(), anchors: z.array(Anchor), params: z.record(z.string(), z.unknown()) }),
  by: PersonRef,
  at: Timestamp,
  /** Review revisions: the state set, or returned to. */
  reviewState: z.enum(REVIEW_STATES).nullable(),
  /** The reviewer's note, or why the marker returned to open. */
  note: z.string().nullable(),
})
export type MarkerRevision = z.infer<typeof MarkerRevision>
export const MarkerHistory = z.object({ revisions: z.array(MarkerRevision), earlier: Earlier })

export const MarkerRestoreBody = z.object({ revisionId: z.string({ error: 'must be a revision id' }).regex(/^\d{1,18}$/, { error: 'must be a revision id from the history' }) }).strict()
export type MarkerRestoreBody = z.infer<typeof MarkerRestoreBody>

/** The scene's markers as they were at a time (the timeline): each one's last revision by then. */
export const SceneStateQuery = z.object({ at: z.iso.datetime({ offset: true, error: 'must be a time such as 2026-12-02T10:00:00Z' }) }).strict()
export const SceneState = z.object({ at: Timestamp, revisions: z.array(MarkerRevision) })
