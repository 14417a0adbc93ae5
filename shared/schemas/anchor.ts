import { z } from 'zod'
import { Id } from './common'

/**
 * The pieces every marker kind's schema is made of: coordinates, anchors (a placement and a point on it),
 * labels and the standard-uncertainty parts of a value. Anchors come in and go out in the scene frame (metres,
 * Z up); the server stores them in their placement's own frame, so moving a placement moves its markers.
 */

const Coordinate = z.number({ error: 'must be a finite number (metres)' })
export const Vec3 = z.tuple([Coordinate, Coordinate, Coordinate], { error: 'must be three numbers [x, y, z]' })
export type Vec3 = z.infer<typeof Vec3>
export const NonZeroVec3 = Vec3.refine((v) => Math.hypot(v[0], v[1], v[2]) > 1e-9, { error: 'must not be the zero vector' })

export const Anchor = z.object({ instanceId: Id, x: Coordinate, y: Coordinate, z: Coordinate })
export type Anchor = z.infer<typeof Anchor>

export const MarkerLabel = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(80, { error: 'must be at most 80 characters' })

/** Exactly `count` anchors; `what` names the kind and its anchors in the error. */
export const anchorsOf = (count: number, what: string) =>
  z.array(Anchor, { error: 'must be a list of anchors' }).length(count, { error: `a ${what} takes exactly ${count} anchors` })

/** One named part of a value's standard uncertainty, in the value's unit (metres or degrees). */
export const CheckPart = z.object({ name: z.string(), u: z.number() })
export type CheckPart = z.infer<typeof CheckPart>

/** u v pairs (metres) in a section's plane. */
export const Uv = z.array(z.number())
export const SectionFrame = z.object({ origin: Vec3, u: Vec3, v: Vec3, n: Vec3 })
export type SectionFrame = z.infer<typeof SectionFrame>
