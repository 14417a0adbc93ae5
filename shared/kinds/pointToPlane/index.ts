import { z } from 'zod'
import { Anchor, MarkerLabel, Vec3 } from '../../schemas/anchor'
import { defineKind } from '../types'

/**
 * A point-to-plane distance: the first anchor is the point; the others (3 to 8) are picked on a surface, and
 * a plane is fitted on them (shared/measure/pointToPlane.ts). A common site check of a wall out of plumb or a
 * floor out of level: how far one point stands off the plane of the rest.
 */

/** Plane points a marker may take (the point itself comes first). */
export const PLANE_POINTS = { min: 3, max: 8 } as const

export const PointToPlaneParams = z.object({}).strict()

export const PointToPlaneResult = z.object({
  kind: z.literal('point-to-plane'),
  /** Positive on the side the plane's normal points (up for a floor), metres. */
  signed: z.number(),
  /** The fitted plane's unit normal and centroid, scene frame. */
  normal: Vec3,
  centroid: Vec3,
  /** Orthogonal RMS of the plane points about their plane (0 for three), metres. */
  planeRms: z.number(),
  /** The plane's angle from level and from plumb, degrees. */
  tiltFromLevel: z.number(),
  tiltFromPlumb: z.number(),
  /** The distance is within its expanded uncertainty of zero: the value is biased up and U only indicative. */
  nearZero: z.boolean(),
})
export type PointToPlaneResult = z.infer<typeof PointToPlaneResult>

const PointToPlaneCreate = z.object({
  kind: z.literal('point-to-plane'),
  label: MarkerLabel.optional(),
  anchors: z
    .array(Anchor, { error: 'must be a list of anchors' })
    .min(1 + PLANE_POINTS.min, { error: `a point-to-plane distance takes the point and at least ${PLANE_POINTS.min} points on the plane` })
    .max(1 + PLANE_POINTS.max, { error: `a point-to-plane distance takes the point and at most ${PLANE_POINTS.max} points on the plane` }),
  params: PointToPlaneParams.default({}),
})

export const pointToPlane = defineKind({
  kind: 'point-to-plane',
  word: 'point to plane',
  unit: 'm',
  maxAnchors: 1 + PLANE_POINTS.max,
  create: PointToPlaneCreate,
  result: PointToPlaneResult,
})
