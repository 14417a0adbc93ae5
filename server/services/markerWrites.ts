import { can, type Right, type Role } from '@shared/auth/roles'
import { invertRigid, transformPoint } from '@shared/geometry/rigidTransform'
import { InstanceUpdateBody, MarkerCreateBody, type Anchor } from '@shared/schemas'
import { Id } from '@shared/schemas/common'
import { ErrorCode } from '@shared/schemas/common'
import { HttpError } from '../errors'
import * as repo from '../repositories/markers'
import { findInstance, listInstances, type InstanceRow } from '../repositories/scenes'
import type { Services } from '../types'
import { kindCheck } from '../markers/kinds'
import { findObject } from '../repositories/objects'

/**
 * The one set of checks every marker and placement write goes through, whichever door it came in by: the
 * REST routes (anchors in the scene frame) and the live work document (anchors in each placement's own
 * frame, checked before the change is applied: server/collab/liveSync.ts `check`). The door only says who
 * (the actor: their account and their role as it is now) and how (the frame). Each check throws an
 * HttpError whose message names the field, the same words on both doors; the services then write.
 */

/** Who writes: the account (null for the server itself) and the role in the project as it is now. */
export interface Actor {
  userId: string | null
  role: Role
}

/** The server's own writes (reconciling a document on load, accepting a registration). */
export const SERVER_ACTOR: Actor = { userId: null, role: 'owner' }

export type Placements = Map<string, number[]>

export async function placementsOf(s: Services, sceneId: string): Promise<Placements> {
  return new Map((await listInstances(s.db, sceneId)).map((i) => [i.id, i.matrix]))
}

export function invalid(field: string, message: string): HttpError {
  return new HttpError(400, ErrorCode.invalidInput, `body.${field}: ${message}`, field)
}

export function needs(actor: Actor, right: Right): void {
  if (!can(actor.role, right)) throw HttpError.forbidden(`Your role in this project (${actor.role}) does not allow this.`)
}

export function fieldError(error: { issues: { path: PropertyKey[]; message: string }[] }): HttpError {
  const issue = error.issues[0]!
  return invalid(issue.path.map(String).join('.'), issue.message)
}

export function toLocal(anchors: readonly Anchor[], placements: Placements): repo.StoredAnchor[] {
  return anchors.map((a) => {
    const [x, y, z] = transformPoint(invertRigid(placements.get(a.instanceId)!), a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
}

/** Placement-frame anchors (the work document's) into the scene frame; a placement not in the scene is a 400. */
function toScene(anchors: readonly repo.StoredAnchor[], placements: Placements): Anchor[] {
  return anchors.map((a, i) => {
    const m = placements.get(a.instanceId)
    if (!m) throw invalid(`anchors.${i}.instanceId`, 'no placement with this id in the scene.')
    const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
}

/** Placements and markers named by the marker (its anchors, and what its kind's params name) must be in its scene. */
export async function validateReferences(s: Services, sceneId: string, body: MarkerCreateBody, placements: Placements, markerId?: string): Promise<void> {
  body.anchors.forEach((a, i) => {
    if (!placements.has(a.instanceId)) throw invalid(`anchors.${i}.instanceId`, 'no placement with this id in the scene.')
  })
  await kindCheck(body.kind).references?.(body.params, {
    sceneId,
    ...(markerId === undefined ? {} : { markerId }),
    hasPlacement: (id) => placements.has(id),
    hasObject: async (id) => (await findObject(s.db, id))?.scene_id === sceneId,
    findMarker: (id) => repo.findMarkerCore(s.db, id),
    invalid,
  })
}

/**
 * A scene holds at most `config.limits.markersPerScene` markers (every one is checked against the points and
 * drawn on every open page): a new one beyond it is refused with 409, saying the limit and what to do.
 */
async function ensureRoomForMarker(s: Services, sceneId: string): Promise<void> {
  const cap = s.config.limits.markersPerScene
  const n = await repo.countMarkersInScene(s.db, sceneId)
  if (n >= cap) throw HttpError.conflict(`This scene already holds ${n} markers, the most a scene may hold (${cap}). Delete markers that are no longer needed, or place the new ones in another scene.`)
}

/** A marker as a door hands it over: anchors in the scene frame (REST) or in their placements' frames (live). */
export type MarkerInput =
  | { frame: 'scene'; body: { kind: unknown; label?: unknown; anchors: unknown; params: unknown } }
  | { frame: 'placement'; body: { kind: unknown; label: unknown; anchors: repo.StoredAnchor[]; params: unknown } }

export interface CheckedMarker {
  body: MarkerCreateBody
  /** Anchors as stored: each in its placement's own frame. */
  anchors: repo.StoredAnchor[]
  placements: Placements
}

/**
 * A new marker in `sceneId`. `markerId`: the id a live writer chose; it must be new everywhere (no marker
 * has it, and no revision names it), so nobody can take over another scene's marker or its history.
 */
export async function checkMarkerCreate(s: Services, actor: Actor, sceneId: string, input: MarkerInput, markerId?: string): Promise<CheckedMarker> {
  needs(actor, 'editMarkers')
  await ensureRoomForMarker(s, sceneId)
  if (markerId !== undefined) {
    if (!Id.safeParse(markerId).success) throw invalid('id', 'a marker id must be a UUID.')
    if (await repo.markerIdUsed(s.db, markerId)) throw new HttpError(409, ErrorCode.conflict, 'body.id: this id is or was another marker’s; a new marker needs a new id.', 'id')
  }
  const placements = await placementsOf(s, sceneId)
  const anchors = input.frame === 'placement' ? toScene(input.body.anchors, placements) : input.body.anchors
  const parsed = MarkerCreateBody.safeParse({ ...input.body, anchors })
  if (!parsed.success) throw fieldError(parsed.error)
  await validateReferences(s, sceneId, parsed.data, placements, markerId)
  return { body: parsed.data, anchors: input.frame === 'placement' ? input.body.anchors : toLocal(parsed.data.anchors, placements), placements }
}

export interface CheckedMarkerUpdate {
  row: repo.MarkerCoreRow
  /** The marker as it will be (scene frame). */
  merged: MarkerCreateBody
  /** New anchors (placement frames) and params, when given. */
  anchors: repo.StoredAnchor[] | undefined
  params: Record<string, unknown> | undefined
  /** Anchors or params were given. */
  geometry: boolean
  placements: Placements
}

/**
 * A change to an existing marker. `sceneId`: the scene the door is in (the live document's); the marker must
 * be one of its own. REST gives only the fields it changes (scene frame); live gives the whole entry.
 */
export async function checkMarkerUpdate(
  s: Services,
  actor: Actor,
  markerId: string,
  input: { frame: 'scene'; body: { label?: string; anchors?: Anchor[]; params?: unknown } } | { frame: 'placement'; body: { kind: string; label: string; anchors: repo.StoredAnchor[]; params: unknown } },
  sceneId?: string,
  /** The row, when the caller has just read it. */
  known?: repo.MarkerCoreRow,
): Promise<CheckedMarkerUpdate> {
  needs(actor, 'editMarkers')
  const row = known ?? (await repo.findMarkerCore(s.db, markerId))
  if (!row || (sceneId !== undefined && row.scene_id !== sceneId)) throw HttpError.notFound(sceneId ? 'No marker with this id in this scene.' : 'No such marker.')
  if (input.frame === 'placement' && input.body.kind !== row.kind) throw invalid('kind', `a marker keeps its kind (${row.kind}).`)
  const placements = await placementsOf(s, row.scene_id)
  // Anchors on a placement no longer in the scene are kept as stored (validateReferences then names them).
  const current = (row.anchors as repo.StoredAnchor[]).map((a) => {
    const m = placements.get(a.instanceId)
    if (!m) return { ...a }
    const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
  const given = input.frame === 'placement' ? { ...input.body, anchors: toScene(input.body.anchors, placements) } : input.body
  const merged = MarkerCreateBody.safeParse({ kind: row.kind, label: given.label ?? row.label, anchors: given.anchors ?? current, params: given.params ?? row.params })
  if (!merged.success) throw fieldError(merged.error)
  const geometry = given.anchors !== undefined || given.params !== undefined
  if (geometry) await validateReferences(s, row.scene_id, merged.data, placements, markerId)
  const anchors = given.anchors === undefined ? undefined : input.frame === 'placement' ? input.body.anchors : toLocal(merged.data.anchors, placements)
  return { row, merged: merged.data, anchors, params: given.params !== undefined ? merged.data.params : undefined, geometry, placements }
}

/** Deleting a marker: the row if there is one (none: nothing to do); another scene's marker is refused. */
export async function checkMarkerDelete(s: Services, actor: Actor, markerId: string, sceneId?: string): Promise<repo.MarkerCoreRow | undefined> {
  needs(actor, 'editMarkers')
  const row = await repo.findMarkerCore(s.db, markerId)
  if (row && sceneId !== undefined && row.scene_id !== sceneId) throw HttpError.notFound('No marker with this id in this scene.')
  return row
}

/**
 * Moving, showing or colouring an existing placement (the REST PATCH, a registration's accept, a live
 * writer's instances entry). Placements are added and removed through the API only (they need a ready scan).
 */
export async function checkPlacementEdit(s: Services, actor: Actor, instanceId: string, body: unknown, sceneId?: string): Promise<{ before: InstanceRow; change: InstanceUpdateBody }> {
  needs(actor, 'editScans')
  const before = await findInstance(s.db, instanceId)
  if (!before || (sceneId !== undefined && before.scene_id !== sceneId)) throw HttpError.notFound(sceneId ? 'No placement with this id in this scene.' : 'No such placement.')
  let change: unknown = body
  if (body && typeof body === 'object' && 'scanId' in body) {
    const { scanId, ...rest } = body as { scanId: unknown }
    if (scanId !== before.scan_id) throw invalid('scanId', 'a placement keeps its scan; place the other scan through the API.')
    change = rest
  }
  const parsed = InstanceUpdateBody.safeParse(change)
  if (!parsed.success) throw fieldError(parsed.error)
  return { before, change: parsed.data }
}
