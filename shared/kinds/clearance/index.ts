import { z } from 'zod'
import { CLEARANCE_OUTCOMES } from '../../collab/states'
import { Anchor, MarkerLabel, NonZeroVec3, SectionFrame, Uv, Vec3 } from '../../schemas/anchor'
import { Id } from '../../schemas/common'
import { SectionFigure } from '../section'
import { defineKind } from '../types'

/**
 * A clearance: does an object (its members' kept points) pass through the free opening of a section marker, and with what
 * margin (shared/measure/clearance.ts, edges.ts, orientation.ts).
 */

/** Required-margin limits, metres. */
export const MARGIN_LIMITS = { min: 0, max: 2 } as const

export const CARRIAGE_MODES = ['floor', 'trolley', 'carried'] as const
export const ORIENTATION_MODES = ['as-it-stands', 'upright', 'tipped', 'any'] as const

export const ClearanceParams = z
  .object({
    /** The object (shared/schemas/objects.ts): its members' kept points are the object. */
    objectId: Id.optional(),
    /** Older clearances name one placement as the object: read as a one-member object with no trims. */
    objectInstanceId: Id.optional(),
    sectionMarkerId: Id,
    /**
     * Further sections along the direction of travel (the far face of a thick wall, a tunnel behind a hatch):
     * the passage is the overlap of all their free openings seen along the travel. A straight passage only.
     */
    alsoThrough: z.array(Id, { error: 'must be a list of section marker ids' }).min(1, { error: 'must name at least one section (or leave it out)' }).max(4, { error: 'must name at most 4 sections' }).optional(),
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
    if ((p.objectId === undefined) === (p.objectInstanceId === undefined)) ctx.addIssue({ code: 'custom', path: ['objectId'], message: 'name the object: give objectId (an object of the scene) or objectInstanceId (one placement as the object), not both' })
    const through = [p.sectionMarkerId, ...(p.alsoThrough ?? [])]
    if (new Set(through).size !== through.length) ctx.addIssue({ code: 'custom', path: ['alsoThrough'], message: 'names a section twice (each section of the passage once)' })
    if (p.orientation && p.maxTurnDegrees !== undefined) ctx.addIssue({ code: 'custom', path: ['maxTurnDegrees'], message: 'give either maxTurnDegrees (a turn in the opening plane) or orientation, not both' })
  })
export type ClearanceParams = z.infer<typeof ClearanceParams>

export const ClearanceResult = z.object({
  kind: z.literal('clearance'),
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
  /** The section the object went through (for the figure); with a passage, its points and every further section's, seen along the travel. */
  section: SectionFigure,
  /** A passage of several sections: each one's own free opening seen along the travel, in the first's u v (the first's first); openingOutline is their overlap. */
  passage: z.array(Uv).default([]),
})
export type ClearanceResult = z.infer<typeof ClearanceResult>

const ClearanceCreate = z.object({
  kind: z.literal('clearance'),
  label: MarkerLabel.optional(),
  anchors: z.array(Anchor).max(0, { error: 'a clearance takes no anchors (it names an object and a section)' }).default([]),
  params: ClearanceParams,
})

export const clearance = defineKind({
  kind: 'clearance',
  word: 'clearance',
  unit: 'm',
  maxAnchors: 0,
  create: ClearanceCreate,
  result: ClearanceResult,
  dependsOn: [
    { param: 'sectionMarkerId', on: 'section' },
    { param: 'alsoThrough', on: 'section' },
  ],
  placementParams: ['objectInstanceId'],
  objectParams: ['objectId'],
})
