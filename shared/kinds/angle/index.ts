import { z } from 'zod'
import { anchorsOf, MarkerLabel } from '../../schemas/anchor'
import { defineKind } from '../types'

/** An angle: first arm, vertex, second arm; the angle at the vertex (shared/measure/angle.ts). */

export const AngleParams = z.object({}).strict()

export const AngleResult = z.object({
  kind: z.literal('angle'),
  /** Near 0 or 180 degrees the first-order uncertainty is only approximate. */
  nearBound: z.boolean(),
})
export type AngleResult = z.infer<typeof AngleResult>

export const angle = defineKind({
  kind: 'angle',
  word: 'angle',
  unit: 'deg',
  maxAnchors: 3,
  create: z.object({ kind: z.literal('angle'), label: MarkerLabel.optional(), anchors: anchorsOf(3, 'angle (first arm, vertex, second arm)'), params: AngleParams.default({}) }),
  result: AngleResult,
})
