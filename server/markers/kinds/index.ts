import type { Check, MarkerKind } from '@shared/schemas'
import type { CheckContext, CheckInput, Snapped } from '../checkParts'
import { angle } from './angle'
import { clearance } from './clearance'
import { distance } from './distance'
import { pointToPlane } from './pointToPlane'
import { section } from './section'
import { size } from './size'

/**
 * The server's side of each marker kind: its check. A kind's check gets the check frame (`base`: state,
 * reason and checked anchors filled in), the snapped anchors, the marker and the context; it returns the
 * finished check (its `result` of the kind's own shape, shared/kinds/<kind>/) or throws `Stop`
 * (server/markers/checkParts.ts) for a state with a reason. A kind may also check what its params name
 * (`references`: a section's placements, a clearance's object and section); every kind's anchors are checked
 * by the caller. Adding a kind: a file beside this one and one line in KIND_CHECKS (DEVELOPERS.md, "Adding
 * things": a marker kind).
 */
export interface KindCheck {
  check(base: Check, snapped: Snapped[], input: CheckInput, ctx: CheckContext): Check | Promise<Check>
  /** Checks the placements and markers a marker of this kind names in its (already parsed) params. */
  references?(params: Record<string, unknown>, refs: ReferenceContext): void | Promise<void>
}

/** What a kind's reference check may ask, and how it refuses (a 400 naming the field). */
export interface ReferenceContext {
  sceneId: string
  /** The marker being changed (undefined for a new one): it may not name itself. */
  markerId?: string
  hasPlacement(id: string): boolean
  /** An object of this scene (shared/schemas/objects.ts). */
  hasObject(id: string): Promise<boolean>
  findMarker(id: string): Promise<{ id: string; scene_id: string; kind: string; params: unknown } | undefined>
  invalid(field: string, message: string): Error
}

const KIND_CHECKS: Record<MarkerKind, KindCheck> = {
  distance,
  angle,
  section,
  clearance,
  'point-to-plane': pointToPlane,
  size,
}

export function kindCheck(kind: MarkerKind): KindCheck {
  return KIND_CHECKS[kind]
}
