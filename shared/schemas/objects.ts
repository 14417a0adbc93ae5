import { z } from 'zod'
import { NonZeroVec3, Vec3 } from './anchor'
import { Id, Timestamp } from './common'

/**
 * Objects and trims: which stored points are the thing being moved.
 *
 * A trim is a box (centre, size, any rotation), a prism (an outline drawn head-on and swept along the view) or
 * a "cut below this height" (a half-space under a level plane); it keeps or cuts points. A set of trims selects
 * points by one rule (shared/measure/trims.ts): a point is kept when it is inside at least one keep trim (or
 * there is none) and inside no cut trim. Trims come in and go out of the API in the scene frame (metres, Z up)
 * like anchors, and are stored in their placement's own frame, so moving a placement moves them. Stored points
 * never change.
 *
 * Two uses: an object's members each carry their own trims (used by that object alone), and a placement may
 * carry scene cuts (cut trims only) that everything reading the placement honours: the viewer, anchor snapping,
 * sections, registration, objects.
 *
 * An object is a named set of placements of one scene (the stations of one thing, aligned), each with its
 * trims, and may drop stray points (statistical outlier removal, shared/measure/strayPoints.ts).
 */

const Metres = z.number({ error: 'must be a finite number (metres)' })
const TRIM_SIZE = { min: 0.001, max: 1000 } as const
const Size = z
  .number({ error: 'must be a number (metres)' })
  .min(TRIM_SIZE.min, { error: `must be at least ${TRIM_SIZE.min} m` })
  .max(TRIM_SIZE.max, { error: `must be at most ${TRIM_SIZE.max} m` })

/** A unit quaternion [x, y, z, w] (normalised on the way in; the zero quaternion is refused). */
export const Quaternion = z
  .tuple([z.number(), z.number(), z.number(), z.number()], { error: 'must be four numbers [x, y, z, w] (a rotation quaternion)' })
  .refine((q) => Math.hypot(...q) > 1e-9, { error: 'must not be the zero quaternion' })
  .transform((q) => {
    const n = Math.hypot(...q)
    return q.map((c) => c / n) as [number, number, number, number]
  })
export type Quaternion = z.infer<typeof Quaternion>

export const TrimBox = z
  .object({
    shape: z.literal('box'),
    centre: Vec3,
    /** Full edge lengths along the box's own x y z (metres). */
    size: z.tuple([Size, Size, Size], { error: 'must be three sizes [x, y, z] in metres' }),
    rotation: Quaternion.default([0, 0, 0, 1]),
  })
  .strict()

export const MAX_OUTLINE_VERTICES = 256
/** A closed outline (u v pairs, metres) drawn head-on: at least 3 corners, no repeated corner, not flat. */
export const Outline = z
  .array(z.tuple([Metres, Metres], { error: 'each corner must be two numbers [u, v]' }), { error: 'must be a list of [u, v] corners' })
  .min(3, { error: 'must have at least 3 corners' })
  .max(MAX_OUTLINE_VERTICES, { error: `must have at most ${MAX_OUTLINE_VERTICES} corners` })
  .superRefine((ring, ctx) => {
    let twiceArea = 0
    for (let i = 0; i < ring.length; i++) {
      const [a, b] = [ring[i]!, ring[(i + 1) % ring.length]!]
      twiceArea += a[0] * b[1] - b[0] * a[1]
    }
    if (Math.abs(twiceArea) < 1e-8) ctx.addIssue({ code: 'custom', message: 'encloses no area (its corners lie on a line)' })
  })

export const TrimPrism = z
  .object({
    shape: z.literal('prism'),
    /** The head-on view's plane: a point of it and its two axes (u to the right, v up on the screen). */
    origin: Vec3,
    u: NonZeroVec3,
    v: NonZeroVec3,
    outline: Outline,
    /** How far the sweep reaches along n = u x v, either way from the plane (metres); unbounded if left out. */
    near: Metres.optional(),
    far: Metres.optional(),
  })
  .strict()
  .superRefine((p, ctx) => {
    const dot = (p.u[0] * p.v[0] + p.u[1] * p.v[1] + p.u[2] * p.v[2]) / (Math.hypot(...p.u) * Math.hypot(...p.v))
    if (Math.abs(dot) > 1e-3) ctx.addIssue({ code: 'custom', path: ['v'], message: 'must be at right angles to u' })
    if (p.near !== undefined && p.far !== undefined && p.far <= p.near) ctx.addIssue({ code: 'custom', path: ['far'], message: 'must be beyond near' })
  })

/** Below a plane: the points under `point` along `up` (a level floor: up is the scene's Z). */
export const TrimBelow = z.object({ shape: z.literal('below'), point: Vec3, up: NonZeroVec3.default([0, 0, 1]) }).strict()

export const TRIM_SHAPES = ['box', 'prism', 'below'] as const
export const TrimShape = z.discriminatedUnion('shape', [TrimBox, TrimPrism, TrimBelow], { error: `shape must be one of ${TRIM_SHAPES.join(', ')}` })
export type TrimShape = z.infer<typeof TrimShape>
export type TrimShapeInput = z.input<typeof TrimShape>

export const TRIM_MODES = ['keep', 'cut'] as const
export const TrimMode = z.enum(TRIM_MODES, { error: `must be one of ${TRIM_MODES.join(', ')}` })
export type TrimMode = z.infer<typeof TrimMode>

const TrimLabel = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(80, { error: 'must be at most 80 characters' })

/** A trim as the API gives it: its shape in the scene frame (placement's current matrix applied). */
export const Trim = z.object({
  id: Id,
  sceneId: Id,
  instanceId: Id,
  /** The object whose member it trims; null for a scene cut of the placement. */
  objectId: Id.nullable(),
  mode: TrimMode,
  label: z.string().nullable(),
  shape: TrimShape,
  revision: z.number().int(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type Trim = z.infer<typeof Trim>

export const TrimCreateFields = z.object({ mode: TrimMode, shape: TrimShape, label: TrimLabel.optional() }).strict()
/** POST /api/objects/:objectId/trims: a trim of one member (instanceId) of the object. */
export const ObjectTrimCreateBody = TrimCreateFields.extend({ instanceId: Id }).strict()
export type ObjectTrimCreateBody = z.infer<typeof ObjectTrimCreateBody>
/** POST /api/instances/:instanceId/trims: a scene cut of the placement (mode must be cut). */
export const SceneCutCreateBody = TrimCreateFields
export type SceneCutCreateBody = z.infer<typeof SceneCutCreateBody>
export const TrimUpdateBody = z
  .object({ mode: TrimMode.optional(), shape: TrimShape.optional(), label: TrimLabel.nullable().optional() })
  .strict()
  .refine((b) => b.mode !== undefined || b.shape !== undefined || b.label !== undefined, { error: 'give at least one of mode, shape, label' })
export type TrimUpdateBody = z.infer<typeof TrimUpdateBody>

/** Stray points: a point whose mean distance to its k nearest neighbours exceeds mean + n sd of all of them. */
export const STRAY_LIMITS = { k: { min: 2, max: 64, default: 8 }, n: { min: 0.5, max: 10, default: 2 } } as const
export const StraySettings = z
  .object({
    k: z.number({ error: 'must be a whole number of neighbours' }).int({ error: 'must be a whole number of neighbours' }).min(STRAY_LIMITS.k.min, { error: `must be at least ${STRAY_LIMITS.k.min}` }).max(STRAY_LIMITS.k.max, { error: `must be at most ${STRAY_LIMITS.k.max}` }).default(STRAY_LIMITS.k.default),
    n: z.number({ error: 'must be a number of standard deviations' }).min(STRAY_LIMITS.n.min, { error: `must be at least ${STRAY_LIMITS.n.min}` }).max(STRAY_LIMITS.n.max, { error: `must be at most ${STRAY_LIMITS.n.max}` }).default(STRAY_LIMITS.n.default),
  })
  .strict()
export type StraySettings = z.infer<typeof StraySettings>

export const MAX_OBJECT_MEMBERS = 16
/** The most objects one scene holds, and the most trims one placement holds for one object (or as scene cuts). */
export const MAX_OBJECTS_PER_SCENE = 100
export const MAX_TRIMS_PER_SET = 32
const ObjectName = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(120, { error: 'must be at most 120 characters' })
const Members = z
  .array(Id, { error: 'must be a list of placement ids' })
  .min(1, { error: 'must name at least one placement' })
  .max(MAX_OBJECT_MEMBERS, { error: `must name at most ${MAX_OBJECT_MEMBERS} placements` })
  .superRefine((ids, ctx) => {
    if (new Set(ids).size !== ids.length) ctx.addIssue({ code: 'custom', message: 'names a placement twice' })
  })

export const SceneObject = z.object({
  id: Id,
  sceneId: Id,
  name: z.string(),
  /** Its placements (instance ids), in the order given. */
  members: z.array(Id),
  /** Stray-point removal, or null when every kept point counts. */
  stray: StraySettings.nullable(),
  /** Its members' trims (scene cuts of those placements are listed under the placements, not here). */
  trims: z.array(Trim),
  revision: z.number().int(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type SceneObject = z.infer<typeof SceneObject>

export const ObjectCreateBody = z.object({ name: ObjectName, members: Members, stray: StraySettings.nullable().default(null) }).strict()
export type ObjectCreateBody = z.infer<typeof ObjectCreateBody>
export const ObjectUpdateBody = z
  .object({ name: ObjectName.optional(), members: Members.optional(), stray: StraySettings.nullable().optional() })
  .strict()
  .refine((b) => b.name !== undefined || b.members !== undefined || b.stray !== undefined, { error: 'give at least one of name, members, stray' })
export type ObjectUpdateBody = z.infer<typeof ObjectUpdateBody>

export const ObjectParams = z.object({ objectId: Id })
export const TrimParams = z.object({ trimId: Id })
export const ObjectResponse = z.object({ object: SceneObject })
export const ObjectList = z.object({ objects: z.array(SceneObject) })
export const TrimResponse = z.object({ trim: Trim })
export const TrimList = z.object({ trims: z.array(Trim) })

/** One version of an object or of one of its trims (GET /api/objects/:objectId/history), newest first. */
export const ObjectRevision = z.object({
  id: Id,
  objectId: Id.nullable(),
  trimId: Id.nullable(),
  action: z.enum(['created', 'edited', 'deleted']),
  /** The object or trim as written (the API's shape then). */
  state: z.record(z.string(), z.unknown()),
  by: z.string().nullable(),
  at: Timestamp,
})
export type ObjectRevision = z.infer<typeof ObjectRevision>
export const ObjectHistory = z.object({ revisions: z.array(ObjectRevision) })

/** GET /api/objects/:objectId/points: what the object's trims and stray filter keep, and a thinned sample. */
export const ObjectPoints = z.object({
  objectId: Id,
  revision: z.number().int(),
  members: z.array(z.object({ instanceId: Id, stored: z.number().int(), sceneCut: z.number().int(), trimmed: z.number().int(), kept: z.number().int() })),
  stray: z.object({ k: z.number().int(), n: z.number(), dropped: z.number().int(), threshold: z.number() }).nullable(),
  kept: z.number().int(),
  /** At most `sampleLimit` kept points, scene frame, x y z flat (for the panel's preview). */
  sample: z.array(z.number()),
  sampleLimit: z.number().int(),
})
export type ObjectPoints = z.infer<typeof ObjectPoints>
