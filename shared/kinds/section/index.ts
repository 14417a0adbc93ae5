import { z } from 'zod'
import { Anchor, CheckPart, MarkerLabel, NonZeroVec3, SectionFrame, Uv, Vec3 } from '../../schemas/anchor'
import { Id } from '../../schemas/common'
import { defineKind } from '../types'

/** A section: a slab of the stored points about a plane (shared/measure/slab.ts), and its free opening if asked. */

/** Slab thickness limits, metres. */
export const SECTION_THICKNESS = { min: 0.002, max: 1, default: 0.1 } as const

export const SECTION_PLANES = ['two-points', 'three-points', 'numbers'] as const
export type SectionPlane = (typeof SECTION_PLANES)[number]
/** Anchors each plane definition takes. */
export const SECTION_PLANE_ANCHORS: Record<SectionPlane, number> = { 'two-points': 2, 'three-points': 3, numbers: 0 }

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

/** A slab of points in its plane's frame: extents, a figure sample, its outline and its free opening. */
export const SectionFigure = z.object({
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
export type SectionFigure = z.infer<typeof SectionFigure>

export const SectionResult = SectionFigure.extend({ kind: z.literal('section') })
export type SectionResult = z.infer<typeof SectionResult>

export const section = defineKind({
  kind: 'section',
  word: 'section',
  unit: 'm',
  maxAnchors: 3,
  create: SectionCreate,
  result: SectionResult,
  placementParams: ['instanceIds'],
})
