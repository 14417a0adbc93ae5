import { z } from 'zod'
import { Anchor, CheckPart, MarkerLabel, Uv, Vec3 } from '../../schemas/anchor'
import { Id } from '../../schemas/common'
import { defineKind } from '../types'

/**
 * The sizes of an object: its length, width and height as the oriented box of its kept points, each face the
 * surface its points sample, the height from the floor it stands on (shared/measure/sizes.ts). It names an
 * object of the scene (shared/schemas/objects.ts) and takes no anchors. Its value, the headline of the card and
 * the sheet, is the length (the longer level side); the width and the height, each with its own U, are in the result.
 */

export const SizeParams = z.object({ objectId: Id }).strict()
export type SizeParams = z.infer<typeof SizeParams>

/** A size with its standard (u) and expanded (U, k = 2) uncertainty and the parts of u, metres. */
export const SizeValue = z.object({ value: z.number(), u: z.number(), U: z.number(), parts: z.array(CheckPart) })
export type SizeValue = z.infer<typeof SizeValue>

export const CURVED_SIZES = ['length', 'width', 'top'] as const

export const SizeResult = z.object({
  kind: z.literal('size'),
  /** The object's name when it was measured. */
  objectName: z.string(),
  length: SizeValue,
  width: SizeValue,
  height: SizeValue,
  box: z.object({
    /** Scene frame, metres. */
    centre: Vec3,
    /** The length's direction, the width's (both level) and up. */
    axes: z.tuple([Vec3, Vec3, Vec3]),
    /** Length, width, height. */
    size: Vec3,
  }),
  /** The floor the object stands on, fitted from the points its trims took away near it (or not found). */
  floor: z.object({ found: z.boolean(), plane: z.object({ point: Vec3, normal: Vec3, rms: z.number(), count: z.number().int() }).nullable() }),
  /** The points' outlines from above (u along the length, v along the width) and from the side (u, up), about the box's centre: for the figure. */
  footprint: Uv,
  side: Uv,
  objectPointCount: z.number().int(),
  /** Sizes taken across a bending face (a drum's sides: its diameter). */
  curved: z.array(z.enum(CURVED_SIZES)),
  assumptions: z.array(z.string()),
})
export type SizeResult = z.infer<typeof SizeResult>

const SizeCreate = z.object({
  kind: z.literal('size'),
  label: MarkerLabel.optional(),
  anchors: z.array(Anchor).max(0, { error: 'a size marker takes no anchors (it names an object)' }).default([]),
  params: SizeParams,
})

export const size = defineKind({
  kind: 'size',
  word: 'size',
  unit: 'm',
  maxAnchors: 0,
  create: SizeCreate,
  result: SizeResult,
  objectParams: ['objectId'],
})
