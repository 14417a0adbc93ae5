import { invertRigid } from '@shared/geometry/rigidTransform'
import { trimToFrame } from '@shared/geometry/trimFrame'
import {
  MAX_OBJECTS_PER_SCENE,
  MAX_TRIMS_PER_SET,
  ObjectCreateBody,
  ObjectTrimCreateBody,
  ObjectUpdateBody,
  SceneCutCreateBody,
  TrimCreateFields,
  TrimShape,
  TrimUpdateBody,
  type ObjectPoints,
  type ObjectRevision,
  type SceneObject,
  type Trim,
} from '@shared/schemas'
import { Id, ErrorCode } from '@shared/schemas/common'
import { HttpError } from '../errors'
import { readObjectPoints } from '../markers/objectPoints'
import * as repo from '../repositories/objects'
import { findInstance } from '../repositories/scenes'
import type { Services } from '../types'
import { fieldError, invalid, needs, placementsOf, type Actor, type Placements } from './markerWrites'
import { pointsChanged } from './markers'

/**
 * Every object and trim write goes through here, whichever door it came in by (the REST routes, the live work
 * document: server/collab/liveSync.ts): the same checks (right, scene, values, members, limits), then the row,
 * the revision (object_revisions) and the re-checks of the markers that read those points (signed-off ones
 * reopened, saying why). Shapes come in and go out in the scene frame; rows hold them in the placement's frame.
 */

const REOPEN = {
  object: (name: string) => `The object “${name}” it measures changed after the sign-off (its placements, trims or stray points).`,
  objectRemoved: (name: string) => `The object “${name}” it measures was deleted.`,
  sceneCut: (name: string) => `The scene cuts of the placement “${name}” it reads changed after the sign-off.`,
}

export interface WriteOptions {
  /** The live door: the scene of the document it came through (another scene's id is refused as not found). */
  sceneId?: string
  /** Written from the live document: it needs no write back. */
  fromLive?: boolean
  /** A new row's id chosen by the writer (the live document's key). */
  id?: string
}

function toTrim(row: repo.TrimRow, placements: Placements): Trim {
  const m = placements.get(row.instance_id)
  const shape = TrimShape.parse(row.shape)
  return {
    id: row.id,
    sceneId: row.scene_id,
    instanceId: row.instance_id,
    objectId: row.object_id,
    mode: row.mode,
    label: row.label,
    shape: m ? trimToFrame(shape, m) : shape,
    revision: row.revision,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

function toObject(row: repo.ObjectRow, trims: readonly repo.TrimRow[], placements: Placements): SceneObject {
  return {
    id: row.id,
    sceneId: row.scene_id,
    name: row.name,
    members: row.members,
    stray: row.stray,
    trims: trims.filter((t) => t.object_id === row.id).map((t) => toTrim(t, placements)),
    revision: row.revision,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

/** A scene-frame shape into the placement's own frame (stored so), or back. */
function toLocalShape(shape: TrimShape, matrix: readonly number[]): TrimShape {
  return trimToFrame(shape, invertRigid([...matrix]))
}

export async function objectsOf(s: Services, sceneId: string): Promise<SceneObject[]> {
  const [rows, trims, placements] = await Promise.all([repo.listObjects(s.db, sceneId), repo.listTrimsOfScene(s.db, sceneId), placementsOf(s, sceneId)])
  return rows.map((r) => toObject(r, trims, placements))
}

async function presentObject(s: Services, objectId: string): Promise<SceneObject> {
  const row = await repo.findObject(s.db, objectId)
  if (!row) throw HttpError.notFound('No such object.')
  return toObject(row, await repo.listTrimsOfObject(s.db, objectId), await placementsOf(s, row.scene_id))
}

export const getObject = presentObject

async function presentTrim(s: Services, trimId: string): Promise<Trim> {
  const row = await repo.findTrim(s.db, trimId)
  if (!row) throw HttpError.notFound('No such trim.')
  return toTrim(row, await placementsOf(s, row.scene_id))
}

function parse<T>(schema: { safeParse(v: unknown): { success: true; data: T } | { success: false; error: { issues: { path: PropertyKey[]; message: string }[] } } }, body: unknown): T {
  const parsed = schema.safeParse(body)
  if (!parsed.success) throw fieldError(parsed.error)
  return parsed.data
}

function membersInScene(members: readonly string[], placements: Placements): void {
  members.forEach((id, i) => {
    if (!placements.has(id)) throw invalid(`members.${i}`, 'no placement with this id in the scene.')
  })
}

async function newId(s: Services, id: string | undefined, table: 'scene_objects' | 'trims'): Promise<string | undefined> {
  if (id === undefined) return undefined
  if (!Id.safeParse(id).success) throw invalid('id', 'must be an id (a UUID).')
  const used = await s.db.selectFrom(table).select('id').where('id', '=', id).executeTakeFirst()
  const history = await s.db.selectFrom('object_revisions').select('id').where(table === 'trims' ? 'trim_id' : 'object_id', '=', id).executeTakeFirst()
  if (used || history) throw new HttpError(409, ErrorCode.conflict, 'body.id: this id is or was in use; a new one needs a new id.', 'id')
  return id
}

async function sceneOfObject(s: Services, objectId: string, sceneId?: string): Promise<repo.ObjectRow> {
  const row = await repo.findObject(s.db, objectId)
  if (!row || (sceneId !== undefined && row.scene_id !== sceneId)) throw HttpError.notFound(sceneId ? 'No object with this id in this scene.' : 'No such object.')
  return row
}

async function revision(s: Services, v: { sceneId: string; objectId: string | null; trimId: string | null; action: 'created' | 'edited' | 'deleted'; state: unknown; userId: string | null }) {
  await repo.insertObjectRevision(s.db, v)
}

// ---- the checks both doors call (nothing written) ----

/** A new object: right, values, members in the scene, room, a fresh id. */
export async function prepareObjectCreate(s: Services, actor: Actor, sceneId: string, input: unknown, id?: string): Promise<{ body: ObjectCreateBody; id: string | undefined }> {
  needs(actor, 'editMarkers')
  const body = parse(ObjectCreateBody, input)
  membersInScene(body.members, await placementsOf(s, sceneId))
  if ((await repo.countObjectsInScene(s.db, sceneId)) >= MAX_OBJECTS_PER_SCENE) throw new HttpError(409, ErrorCode.conflict, `The scene holds ${MAX_OBJECTS_PER_SCENE} objects, the most a scene may hold; delete one first.`)
  return { body, id: await newId(s, id, 'scene_objects') }
}

export async function prepareObjectUpdate(s: Services, actor: Actor, objectId: string, input: unknown, sceneId?: string): Promise<{ before: repo.ObjectRow; body: ObjectUpdateBody }> {
  needs(actor, 'editMarkers')
  const before = await sceneOfObject(s, objectId, sceneId)
  const body = parse(ObjectUpdateBody, input)
  if (body.members) membersInScene(body.members, await placementsOf(s, before.scene_id))
  return { before, body }
}

export async function prepareObjectDelete(s: Services, actor: Actor, objectId: string, sceneId?: string): Promise<repo.ObjectRow | undefined> {
  needs(actor, 'editMarkers')
  const before = await repo.findObject(s.db, objectId)
  if (before && sceneId !== undefined && before.scene_id !== sceneId) throw HttpError.notFound('No object with this id in this scene.')
  return before
}

/** A trim as a writer gives it: its placement, its object (null: a scene cut), mode, label, shape. */
export interface TrimEntry {
  instanceId: string
  objectId: string | null
  mode: 'keep' | 'cut'
  label?: string | null
  shape: unknown
}

/**
 * A new trim: right, values, the placement in the scene (a member of the object for an object's trim), a scene
 * cut only cutting, room. `frame`: the REST door gives the shape in the scene frame, the live door in the
 * placement's. Returns the row's values (shape in the placement's frame).
 */
export async function prepareTrimCreate(s: Services, actor: Actor, sceneId: string, entry: TrimEntry, frame: 'scene' | 'placement', id?: string) {
  needs(actor, 'editMarkers')
  const fields = parse(TrimCreateFields, { mode: entry.mode, shape: entry.shape, ...(entry.label != null ? { label: entry.label } : {}) })
  const placement = await findInstance(s.db, entry.instanceId)
  if (!placement || placement.scene_id !== sceneId) throw invalid('instanceId', 'no placement with this id in the scene.')
  if (entry.objectId !== null) {
    const object = await sceneOfObject(s, entry.objectId, sceneId).catch(() => {
      throw invalid('objectId', 'no object with this id in the scene.')
    })
    if (!object.members.includes(entry.instanceId)) throw invalid('instanceId', 'that placement is not a member of this object (add it to the object first).')
  } else if (fields.mode !== 'cut') throw invalid('mode', 'a placement’s scene cuts only cut points; a keep trim belongs to an object’s member (make an object of the placement).')
  if ((await repo.countTrims(s.db, entry.instanceId, entry.objectId)) >= MAX_TRIMS_PER_SET) throw new HttpError(409, ErrorCode.conflict, `This placement already has ${MAX_TRIMS_PER_SET} trims here, the most it may hold; combine or delete some first.`)
  return {
    id: await newId(s, id, 'trims'),
    sceneId,
    instanceId: entry.instanceId,
    objectId: entry.objectId,
    mode: fields.mode,
    label: fields.label ?? null,
    shape: frame === 'scene' ? toLocalShape(fields.shape, placement.matrix) : fields.shape,
  }
}

export async function prepareTrimUpdate(s: Services, actor: Actor, trimId: string, input: unknown, frame: 'scene' | 'placement', sceneId?: string) {
  needs(actor, 'editMarkers')
  const before = await repo.findTrim(s.db, trimId)
  if (!before || (sceneId !== undefined && before.scene_id !== sceneId)) throw HttpError.notFound(sceneId ? 'No trim with this id in this scene.' : 'No such trim.')
  const body = parse(TrimUpdateBody, input)
  if (before.object_id === null && body.mode === 'keep') throw invalid('mode', 'a placement’s scene cuts only cut points; a keep trim belongs to an object’s member.')
  const placement = await findInstance(s.db, before.instance_id)
  if (!placement) throw HttpError.notFound('No such trim.')
  const shape = body.shape ? (frame === 'scene' ? toLocalShape(body.shape, placement.matrix) : body.shape) : undefined
  return { before, body, shape }
}

export async function prepareTrimDelete(s: Services, actor: Actor, trimId: string, sceneId?: string): Promise<repo.TrimRow | undefined> {
  needs(actor, 'editMarkers')
  const before = await repo.findTrim(s.db, trimId)
  if (before && sceneId !== undefined && before.scene_id !== sceneId) throw HttpError.notFound('No trim with this id in this scene.')
  return before
}

// ---- objects ----

export async function createObject(s: Services, sceneId: string, input: unknown, actor: Actor, options: WriteOptions = {}): Promise<SceneObject> {
  const { body, id: chosen } = await prepareObjectCreate(s, actor, sceneId, input, options.id)
  const id = await repo.insertObject(s.db, { id: chosen, sceneId, name: body.name, stray: body.stray, members: body.members, createdBy: actor.userId })
  const object = await presentObject(s, id)
  await revision(s, { sceneId, objectId: id, trimId: null, action: 'created', state: object, userId: actor.userId })
  if (!options.fromLive) await s.live.objectChanged(sceneId, id)
  return object
}

export async function updateObject(s: Services, objectId: string, input: unknown, actor: Actor, options: WriteOptions = {}): Promise<SceneObject> {
  const { before, body } = await prepareObjectUpdate(s, actor, objectId, input, options.sceneId)
  const sameMembers = !body.members || (body.members.length === before.members.length && body.members.every((m, i) => m === before.members[i]))
  const sameStray = body.stray === undefined || JSON.stringify(body.stray) === JSON.stringify(before.stray)
  if (sameMembers && sameStray && (body.name === undefined || body.name === before.name)) return presentObject(s, objectId)
  const dropped = sameMembers ? [] : (await repo.listTrimsOfObject(s.db, objectId)).filter((t) => !body.members!.includes(t.instance_id)).map((t) => t.id)
  await repo.updateObject(s.db, objectId, body)
  const object = await presentObject(s, objectId)
  await revision(s, { sceneId: before.scene_id, objectId, trimId: null, action: 'edited', state: object, userId: actor.userId })
  // A new name changes nothing measured; members and stray points change the points read.
  if (!sameMembers || !sameStray) await pointsChanged(s, before.scene_id, { objectIds: [objectId], note: REOPEN.object(object.name), userId: actor.userId })
  if (!options.fromLive) await s.live.objectChanged(before.scene_id, objectId)
  // A member left out took its trims along (in PostgreSQL by the foreign key; in the document here).
  for (const trimId of dropped) await s.live.trimRemoved(before.scene_id, trimId)
  return object
}

export async function removeObject(s: Services, objectId: string, actor: Actor, options: WriteOptions = {}): Promise<void> {
  const before = await prepareObjectDelete(s, actor, objectId, options.sceneId)
  if (!before) return
  const trims = await repo.listTrimsOfObject(s.db, objectId)
  // The markers first (they go pending while the object still reads), then the row with its members and trims.
  await pointsChanged(s, before.scene_id, { objectIds: [objectId], note: REOPEN.objectRemoved(before.name), userId: actor.userId })
  await repo.deleteObject(s.db, objectId)
  await revision(s, { sceneId: before.scene_id, objectId, trimId: null, action: 'deleted', state: { id: objectId, name: before.name, members: before.members }, userId: actor.userId })
  if (!options.fromLive) await s.live.objectRemoved(before.scene_id, objectId, trims.map((t) => t.id))
  else for (const t of trims) await s.live.trimRemoved(before.scene_id, t.id)
}

// ---- trims ----

/** A trim of one member of an object (keep or cut), used by that object alone (REST: scene frame). */
export async function createObjectTrim(s: Services, objectId: string, input: unknown, actor: Actor, options: WriteOptions = {}): Promise<Trim> {
  const object = await sceneOfObject(s, objectId, options.sceneId)
  const body = parse(ObjectTrimCreateBody, input)
  return createTrim(s, object.scene_id, { ...body, objectId }, actor, 'scene', options)
}

/** A scene cut of a placement: cut only; everything that reads the placement leaves its points out. */
export async function createSceneCut(s: Services, instanceId: string, input: unknown, actor: Actor, options: WriteOptions = {}): Promise<Trim> {
  const placement = await findInstance(s.db, instanceId)
  if (!placement || (options.sceneId !== undefined && placement.scene_id !== options.sceneId)) throw HttpError.notFound(options.sceneId ? 'No placement with this id in this scene.' : 'No such placement.')
  const body = parse(SceneCutCreateBody, input)
  return createTrim(s, placement.scene_id, { ...body, instanceId, objectId: null }, actor, 'scene', options)
}

/** Both doors' new trim (the live door with the shape in the placement's frame). */
export async function createTrim(s: Services, sceneId: string, entry: TrimEntry, actor: Actor, frame: 'scene' | 'placement', options: WriteOptions = {}): Promise<Trim> {
  const values = await prepareTrimCreate(s, actor, sceneId, entry, frame, options.id)
  const id = await repo.insertTrim(s.db, { ...values, createdBy: actor.userId })
  return trimWritten(s, id, 'created', actor, options)
}

export async function updateTrim(s: Services, trimId: string, input: unknown, actor: Actor, options: WriteOptions & { frame?: 'scene' | 'placement' } = {}): Promise<Trim> {
  const { before, body, shape } = await prepareTrimUpdate(s, actor, trimId, input, options.frame ?? 'scene', options.sceneId)
  const same = (body.mode === undefined || body.mode === before.mode) && (body.label === undefined || body.label === before.label) && (shape === undefined || sameShape(shape, before.shape))
  if (same) return presentTrim(s, trimId)
  await repo.updateTrim(s.db, trimId, { mode: body.mode, label: body.label, shape })
  const geometry = (body.mode !== undefined && body.mode !== before.mode) || (shape !== undefined && !sameShape(shape, before.shape))
  return trimWritten(s, trimId, 'edited', actor, options, geometry)
}

/** Same shape within a nanometre (the live door sends back what it was given, through two frame changes). */
function sameShape(a: unknown, b: unknown): boolean {
  const flat = (v: unknown): unknown[] => (Array.isArray(v) ? v.flatMap(flat) : v && typeof v === 'object' ? Object.entries(v).sort(([x], [y]) => x.localeCompare(y)).flatMap(([k, x]) => [k, ...flat(x)]) : [v])
  const fa = flat(a), fb = flat(b)
  return fa.length === fb.length && fa.every((x, i) => (typeof x === 'number' && typeof fb[i] === 'number' ? Math.abs(x - (fb[i] as number)) < 1e-9 : x === fb[i]))
}

export async function removeTrim(s: Services, trimId: string, actor: Actor, options: WriteOptions = {}): Promise<void> {
  const before = await prepareTrimDelete(s, actor, trimId, options.sceneId)
  if (!before) return
  const trim = toTrim(before, await placementsOf(s, before.scene_id))
  await repo.deleteTrim(s.db, trimId)
  if (before.object_id) await repo.bumpObject(s.db, before.object_id)
  await revision(s, { sceneId: before.scene_id, objectId: before.object_id, trimId, action: 'deleted', state: trim, userId: actor.userId })
  await trimPointsChanged(s, before, actor)
  if (!options.fromLive) await s.live.trimRemoved(before.scene_id, trimId)
}

async function trimPointsChanged(s: Services, row: repo.TrimRow, actor: Actor): Promise<void> {
  if (row.object_id) {
    const object = await repo.findObject(s.db, row.object_id)
    await pointsChanged(s, row.scene_id, { objectIds: [row.object_id], note: REOPEN.object(object?.name ?? 'deleted'), userId: actor.userId })
  } else {
    const placement = await findInstance(s.db, row.instance_id)
    await pointsChanged(s, row.scene_id, { instanceIds: [row.instance_id], note: REOPEN.sceneCut(placement?.scan_name ?? 'deleted'), userId: actor.userId })
  }
}

async function trimWritten(s: Services, trimId: string, action: 'created' | 'edited', actor: Actor, options: WriteOptions, geometry = true): Promise<Trim> {
  const row = (await repo.findTrim(s.db, trimId))!
  if (row.object_id && geometry) await repo.bumpObject(s.db, row.object_id)
  const trim = toTrim(row, await placementsOf(s, row.scene_id))
  await revision(s, { sceneId: row.scene_id, objectId: row.object_id, trimId, action, state: trim, userId: actor.userId })
  if (geometry) await trimPointsChanged(s, row, actor)
  if (!options.fromLive) await s.live.trimChanged(row.scene_id, trimId)
  return trim
}

export async function trimsOfObject(s: Services, objectId: string): Promise<Trim[]> {
  return (await presentObject(s, objectId)).trims
}

export async function sceneCutsOf(s: Services, instanceId: string): Promise<Trim[]> {
  const placement = await findInstance(s.db, instanceId)
  if (!placement) throw HttpError.notFound('No such placement.')
  const placements = await placementsOf(s, placement.scene_id)
  return (await repo.listSceneCuts(s.db, [instanceId])).map((t) => toTrim(t, placements))
}

export async function getTrim(s: Services, trimId: string): Promise<Trim> {
  return presentTrim(s, trimId)
}

/** What the object's trims and stray filter keep, and a thinned sample of it for the panel's preview. */
export async function objectPointsOf(s: Services, objectId: string, sampleLimit = 20_000): Promise<ObjectPoints> {
  const row = await repo.findObject(s.db, objectId)
  if (!row) throw HttpError.notFound('No such object.')
  const read = await readObjectPoints({ db: s.db, points: s.scanIndexes }, row.scene_id, { objectId }, { maxPoints: s.config.limits.checkPoints })
  if ('problem' in read) throw new HttpError(409, ErrorCode.conflict, read.problem)
  const count = read.points.length / 3
  const step = Math.max(1, Math.ceil(count / sampleLimit))
  const sample: number[] = []
  for (let i = 0; i < count; i += step) sample.push(round(read.points[3 * i]!), round(read.points[3 * i + 1]!), round(read.points[3 * i + 2]!))
  return {
    objectId,
    revision: row.revision,
    members: read.members.map((m) => ({ instanceId: m.instanceId, stored: m.stored, sceneCut: m.sceneCut, trimmed: m.trimmed, kept: m.kept })),
    stray: read.stray,
    kept: count,
    sample,
    sampleLimit,
  }
}

const round = (x: number) => Math.round(x * 1e4) / 1e4

/** An object's versions and its trims', newest first (at most 200). */
export async function historyOfObject(s: Services, objectId: string): Promise<ObjectRevision[]> {
  const rows = await repo.listObjectRevisions(s.db, { sceneId: (await sceneOfObject(s, objectId)).scene_id, objectId, limit: 200 })
  return rows.map((r): ObjectRevision => ({ id: r.id, objectId: r.object_id, trimId: r.trim_id, action: r.action, state: r.state as Record<string, unknown>, by: r.user_name ?? null, at: r.created_at.toISOString() }))
}
