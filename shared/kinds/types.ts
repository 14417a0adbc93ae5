import type { z } from 'zod'

/**
 * What a marker kind is on both sides (shared/kinds/<kind>/index.ts): its name, the schema of a new marker
 * of it (a zod object with `kind` as a literal, its anchors and its params), the schema of its check's
 * result (an object with the same `kind` literal), its unit and how many anchors it may hold.
 */
export interface KindSpec {
  kind: string
  /** The kind in words, as errors and default labels say it ("distance", "point to plane"). */
  word: string
  /** The value's unit: metres, degrees, or square metres (a section without an opening gives its area). */
  unit: 'm' | 'deg' | 'm2'
  /** The most anchors a marker of this kind holds (an edit's anchors are capped by the largest). */
  maxAnchors: number
  /** The create body: `z.object({ kind: z.literal(kind), label, anchors, params })`, refinements allowed. */
  create: z.ZodType
  /** The kind's part of a check: `z.object({ kind: z.literal(kind), ... })`. */
  result: z.ZodObject
  /**
   * Params that name another marker of the scene this one is measured through (a clearance's section), one id or
   * a list, and the kind of marker they name (`on`): when that marker changes or goes, this one is checked again
   * (and reopened if it was signed off).
   */
  dependsOn?: readonly { param: string; on: string }[]
  /**
   * Params that name placements of the scene, one id or a list (a section's instanceIds, a clearance's
   * object): when such a placement moves or goes, the marker is checked again. Anchors' placements always count.
   */
  placementParams?: readonly string[]
  /**
   * Params that name an object of the scene (shared/schemas/objects.ts): when the object, its members or their
   * trims change, the marker is checked again (and reopened if it was signed off).
   */
  objectParams?: readonly string[]
}

/** Declares a kind, keeping its literal types (for the registry's unions). */
export function defineKind<const S extends KindSpec>(spec: S): S {
  return spec
}
