import { z } from 'zod'
import { anchorsOf, MarkerLabel } from '../../schemas/anchor'
import { defineKind } from '../types'

/** A distance: two anchors, the length between their snapped points (shared/measure/distance.ts). */

export const DistanceParams = z.object({}).strict()

export const DistanceResult = z.object({
  kind: z.literal('distance'),
  /** Components of B - A; uHorizontal and uVertical are standard uncertainties (k = 1), metres. */
  dx: z.number(),
  dy: z.number(),
  dz: z.number(),
  horizontal: z.number(),
  vertical: z.number(),
  uHorizontal: z.number().nullable(),
  uVertical: z.number(),
})
export type DistanceResult = z.infer<typeof DistanceResult>

export const distance = defineKind({
  kind: 'distance',
  word: 'distance',
  unit: 'm',
  maxAnchors: 2,
  create: z.object({ kind: z.literal('distance'), label: MarkerLabel.optional(), anchors: anchorsOf(2, 'distance'), params: DistanceParams.default({}) }),
  result: DistanceResult,
})
