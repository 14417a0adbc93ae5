import { z } from 'zod'
import { CHECK_STATES, CLEARANCE_OUTCOMES, REVIEW_STATES } from '../collab/states'
import { Id, Timestamp } from './common'
import { Earlier } from './paging'

/**
 * Markers: the API contract (DESIGN section 7). Anchors come in and go out in the scene frame (metres, Z up);
 * the server stores them in their placement's own frame, so moving a placement moves its markers.
 */

export const MARKER_KINDS = ['distance', 'angle', 'section', 'clearance'] as const
export type MarkerKind = (typeof MARKER_KINDS)[number]

const Coordinate = z.number({ error: 'must be a finite number (metres)' })
export const Vec3 = z.tuple([Coordinate, Coordinate, Coordinate], { error: 'must be three numbers [x, y, z]' })
export type Vec3 = z.infer<typeof Vec3>

export const Anchor = z.object({ instanceId: Id, x: Coordinate, y: Coordinate, z: Coordinate })
export type Anchor = z.infer<typeof Anchor>

const MarkerLabel = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(80, { error: 'must be at most 80 characters' })

/** Slab thickness limits, metres. */
export const SECTION_THICKNESS = { min: 0.002, max: 1, default: 0.1 } as const
/** Required-margin limits, metres. */
export const MARGIN_LIMITS = { min: 0, max: 2 } as const
/** Anchor tolerance limits, metres (a project may set its own; otherwise max(3 x spacing, 5 mm)). */
export const TOLERANCE_LIMITS = { min: 0.001, max: 0.5, floor: 0.005, spacingFactor: 3 } as const

export const SECTION_PLANES = ['two-points', 'three-points', 'numbers'] as const
export type SectionPlane = (typeof SECTION_PLANES)[number]
/** Anchors each plane definition takes. */
export const SECTION_PLANE_ANCHORS: Record<SectionPlane, number> = { 'two-points': 2, 'three-points': 3, numbers: 0 }

const NonZeroVec3 = Vec3.refine((v) => Math.hypot(v[0], v[1], v[2]) > 1e-9, { error: 'must not be the zero vector' })

export const DistanceParams = z.object({}).strict()
export const AngleParams = z.object({}).strict()

export const SectionParams = z
  .object({
    /** two-points: a vertical plane through both anchors; three-points: the plane through them; numbers: origin and normal. */
    plane: z.enum(SECTION_PLANES, { error: `must be one of ${SECTION_PLANES.join(', ')}` }),
    thickness: z
      .number({ error: 'must be a number (metres)' })
      .min(SECTION_THICKNESS.min, { error: `must be at least ${SECTION_THICKNESS.min} m` })
      .max(SECTION_THICKNESS.max, { error: `must be at most ${SECTION_THICKNESS.max} m` })
      .default(SECTION_THICKNESS.default),
    /** Scene frame; numbers only. */
    origin: Vec3.optional(),
    normal: NonZeroVec3.optional(),
    /** Find the free opening around a seed (default: the anchors' centre, or the origin). */
    opening: z.boolean({ error: 'must be true or false' }).default(false),
    seed: Vec3.optional(),
    /** Placements the slab cuts (default: the anchors' placements; required for numbers). */
    instanceIds: z.array(Id, { error: 'must be a list of placement ids' }).min(1, { error: 'must name at least one placement' }).max(32).optional(),
  })
  .strict()
export type SectionParams = z.infer<typeof SectionParams>

export const CARRIAGE_MODES = ['floor', 'trolley', 'carried'] as const
export const ORIENTATION_MODES = ['as-it-stands', 'upright', 'tipped', 'any'] as const

export const ClearanceParams = z
  .object({
    objectInstanceId: Id,
    sectionMarkerId: Id,
    /** Direction of travel, scene frame (default: the section's normal). */
    direction: NonZeroVec3.optional(),
    /** Metres; default: the project's required margin. */
    requiredMargin: z
      .number({ error: 'must be a number (metres)' })
      .min(MARGIN_LIMITS.min, { error: 'must not be negative' })
      .max(MARGIN_LIMITS.max, { error: `must be at most ${MARGIN_LIMITS.max} m` })
      .optional(),
    /** Degrees either way the object may be turned in the opening's plane (0: as scanned, upright); default any. */
    maxTurnDegrees: z.number({ error: 'must be a number of degrees' }).min(0, { error: 'must not be negative' }).max(180, { error: 'must be at most 180 degrees' }).optional(),
    /**
     * How the object moves through: resting on the opening's floor, on a trolley or skates of a height, or
     * carried free in the opening. Default: on the floor when the opening's lower edge is a floor, else carried.
     */
    carriage: z
      .discriminatedUnion(
        'mode',
        [
          z.object({ mode: z.literal('floor') }).strict(),
          z.object({ mode: z.literal('trolley'), height: z.number({ error: 'must be a number (metres)' }).min(0.005, { error: 'must be at least 0.005 m' }).max(3, { error: 'must be at most 3 m' }) }).strict(),
          z.object({ mode: z.literal('carried') }).strict(),
        ],
        { error: `mode must be one of ${CARRIAGE_MODES.join(', ')}` },
      )
      .optional(),
    /**
     * How the object may be turned or tipped, by its own up direction (instead of maxTurnDegrees): as it
     * stands, upright (turned about the vertical only), tipped at most maxTipDegrees, or any way.
     */
    orientation: z
      .object({
        mode: z.enum(ORIENTATION_MODES, { error: `must be one of ${ORIENTATION_MODES.join(', ')}` }),
        maxTipDegrees: z.number({ error: 'must be a number of degrees' }).min(0, { error: 'must not be negative' }).max(180, { error: 'must be at most 180 degrees' }).optional(),
      })
      .strict()
      .superRefine((o, ctx) => {
        if (o.mode === 'tipped' && o.maxTipDegrees === undefined) ctx.addIssue({ code: 'custom', path: ['maxTipDegrees'], message: 'is required when the object may be tipped' })
        if (o.mode !== 'tipped' && o.maxTipDegrees !== undefined) ctx.addIssue({ code: 'custom', path: ['maxTipDegrees'], message: 'is only for mode tipped' })
      })
      .optional(),
  })
  .strict()
  .superRefine((p, ctx) => {
    if (p.orientation && p.maxTurnDegrees !== undefined) ctx.addIssue({ code: 'custom', path: ['maxTurnDegrees'], message: 'give either maxTurnDegrees (a turn in the opening plane) or orientation, not both' })
  })
export type ClearanceParams = z.infer<typeof ClearanceParams>

const anchorsOf = (count: number, kind: string) =>
  z.array(Anchor, { error: 'must be a list of anchors' }).length(count, { error: `a ${kind} takes exactly ${count} anchors` })

const DistanceCreate = z.object({ kind: z.literal('distance'), label: MarkerLabel.optional(), anchors: anchorsOf(2, 'distance'), params: DistanceParams.default({}) })
const AngleCreate = z.object({ kind: z.literal('angle'), label: MarkerLabel.optional(), anchors: anchorsOf(3, 'angle (first arm, vertex, second arm)'), params: AngleParams.default({}) })
const SectionCreate = z
  .object({ kind: z.literal('section'), label: MarkerLabel.optional(), anchors: z.array(Anchor, { error: 'must be a list of anchors' }).max(3, { error: 'a section takes at most 3 anchors' }), params: SectionParams })
  .superRefine((m, ctx) => {
    const want = SECTION_PLANE_ANCHORS[m.params.plane]
    if (m.anchors.length !== want) ctx.addIssue({ code: 'custom', path: ['anchors'], message: `a section by ${m.params.plane} takes exactly ${want} anchors` })
    if (m.params.plane === 'numbers') {
      if (!m.params.origin) ctx.addIssue({ code: 'custom', path: ['params', 'origin'], message: 'is required for a section by numbers' })
      if (!m.params.normal) ctx.addIssue({ code: 'custom', path: ['params', 'normal'], message: 'is required for a section by numbers' })
      if (!m.params.instanceIds) ctx.addIssue({ code: 'custom', path: ['params', 'instanceIds'], message: 'is required for a section by numbers' })
    } else {
      if (m.params.origin) ctx.addIssue({ code: 'custom', path: ['params', 'origin'], message: 'is only for a section by numbers' })
      if (m.params.normal) ctx.addIssue({ code: 'custom', path: ['params', 'normal'], message: 'is only for a section by numbers' })
    }
  })
const ClearanceCreate = z.object({ kind: z.literal('clearance'), label: MarkerLabel.optional(), anchors: z.array(Anchor).max(0, { error: 'a clearance takes no anchors (it names an object placement and a section)' }).default([]), params: ClearanceParams })

export const MarkerCreateBody = z.discriminatedUnion('kind', [DistanceCreate, AngleCreate, SectionCreate, ClearanceCreate], {
  error: `kind must be one of ${MARKER_KINDS.join(', ')}`,
})
export type MarkerCreateBody = z.infer<typeof MarkerCreateBody>

/** The kind cannot change; anchors and params are replaced whole and checked against the kind. */
export const MarkerUpdateBody = z
  .object({ label: MarkerLabel, anchors: z.array(Anchor, { error: 'must be a list of anchors' }).max(3), params: z.record(z.string(), z.unknown()) })
  .partial()
  .strict()
  .refine((v) => v.label !== undefined || v.anchors !== undefined || v.params !== undefined, { error: 'give a label, anchors or params to change' })
export type MarkerUpdateBody = z.infer<typeof MarkerUpdateBody>

export const MarkerParams = z.object({ markerId: Id })

/** One named part of a value's standard uncertainty, in the value's unit (metres or degrees). */
export const CheckPart = z.object({ name: z.string(), u: z.number() })
export type CheckPart = z.infer<typeof CheckPart>

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

const Uv = z.array(z.number())
export const SectionFrame = z.object({ origin: Vec3, u: Vec3, v: Vec3, n: Vec3 })
export type SectionFrame = z.infer<typeof SectionFrame>

export const SectionResult = z.object({
  frame: SectionFrame,
  thickness: z.number(),
  pointCount: z.number().int(),
  extents: z.object({ uMin: z.number(), uMax: z.number(), vMin: z.number(), vMax: z.number() }),
  /** u v pairs (metres): a thinned sample of the slab's points for the figure. */
  sample: Uv,
  /** Concave outline of the slab's points (u v ring) and its area. */
  outline: Uv,
  area: z.number(),
  spacing: z.number(),
  opening: z
    .object({
      seed: z.tuple([z.number(), z.number()]),
      outline: Uv,
      area: z.number(),
      clearWidth: z.number(),
      clearWidthAtV: z.number(),
      clearHeight: z.number(),
      clearHeightAtU: z.number(),
      /** Expanded uncertainties (k = 2) of the clear width and height, metres; parts are standard uncertainties. */
      uncertainty: z.object({ width: z.number(), height: z.number(), parts: z.array(CheckPart) }),
      resolution: z.number(),
      method: z.string(),
    })
    .nullable(),
  openingProblem: z.string().nullable(),
})
export type SectionResult = z.infer<typeof SectionResult>

export const ClearanceResult = z.object({
  outcome: z.enum(CLEARANCE_OUTCOMES),
  collides: z.boolean(),
  margin: z.number(),
  requiredMargin: z.number(),
  rotationDegrees: z.number(),
  translation: z.tuple([z.number(), z.number()]),
  /** Where the smallest margin occurs, section u v (metres). */
  nearest: z.object({ silhouettePoint: z.tuple([z.number(), z.number()]), boundaryPoint: z.tuple([z.number(), z.number()]) }),
  direction: Vec3,
  frame: SectionFrame,
  openingOutline: Uv,
  /** The object's silhouette hull as placed at the best rotation, u v ring. */
  silhouette: Uv,
  objectPointCount: z.number().int(),
  resolution: z.number(),
  assumptions: z.array(z.string()),
  /** How the object was taken to move: resting on `restOn` (section v, metres) or carried (null). */
  carriage: z.object({ mode: z.enum(CARRIAGE_MODES), restOn: z.number().nullable(), floorFound: z.boolean() }).nullable().default(null),
  /** With orientation limits: the best orientation found, in a rigger's words, and the margin as it stands. */
  orientation: z
    .object({ mode: z.enum(ORIENTATION_MODES), words: z.string(), turn: z.number(), tip: z.number(), spin: z.number(), matrix: z.array(z.number()).length(9), asItStands: z.number() })
    .nullable()
    .default(null),
})
export type ClearanceResult = z.infer<typeof ClearanceResult>

export const Check = z.object({
  state: z.enum(CHECK_STATES),
  /** Why, in words, when the state is not checked (or a note on a checked value). */
  reason: z.string().nullable(),
  /** A clearance's check also carries its section (for the figure). Metres, degrees for an angle; a section's value is its clear width when it has an opening, else its area (m2). */
  value: z.number().nullable(),
  unit: z.enum(['m', 'deg', 'm2']).nullable(),
  standardUncertainty: z.number().nullable(),
  expandedUncertainty: z.number().nullable(),
  coverageFactor: z.literal(2),
  parts: z.array(CheckPart),
  anchors: z.array(CheckedAnchor),
  distance: z
    /** Components of B - A; uHorizontal and uVertical are standard uncertainties (k = 1), metres. */
    .object({ dx: z.number(), dy: z.number(), dz: z.number(), horizontal: z.number(), vertical: z.number(), uHorizontal: z.number().nullable(), uVertical: z.number() })
    .nullable(),
  angle: z.object({ nearBound: z.boolean() }).nullable(),
  section: SectionResult.nullable(),
  clearance: ClearanceResult.nullable(),
  checkedAt: Timestamp.nullable(),
  /** The marker revision this check was computed for. */
  basedOn: z.number().int(),
})
export type Check = z.infer<typeof Check>

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
    distance: null,
    angle: null,
    section: null,
    clearance: null,
    checkedAt,
    basedOn,
  }
}

export const PersonRef = z.object({ id: Id, name: z.string() }).nullable()

/**
 * A marker's review (DESIGN sections 2 and 3.5): open, changes-asked or signed-off, who set it and when, and
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
