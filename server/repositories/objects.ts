import { sql } from 'kysely'
import { OBJECT_PARAMS } from '@shared/kinds'
import type { Conn } from '../db'

/** Objects, their members and trims (migration 20261207100000_objects_and_trims.ts). */

export interface ObjectRow {
  id: string
  scene_id: string
  name: string
  stray: { k: number; n: number } | null
  revision: number
  created_at: Date
  updated_at: Date
  members: string[]
}

export interface TrimRow {
  id: string
  scene_id: string
  instance_id: string
  object_id: string | null
  mode: 'keep' | 'cut'
  label: string | null
  shape: Record<string, unknown>
  revision: number
  created_at: Date
  updated_at: Date
}

const objects = (db: Conn) =>
  db
    .selectFrom('scene_objects as o')
    .select((eb) => [
      'o.id',
      'o.scene_id',
      'o.name',
      'o.stray',
      'o.revision',
      'o.created_at',
      'o.updated_at',
      sql<string[]>`coalesce((select array_agg(m.instance_id order by m.position) from object_members m where m.object_id = o.id), '{}')`.as('members'),
    ])

export async function listObjects(db: Conn, sceneId: string): Promise<ObjectRow[]> {
  return (await objects(db).where('o.scene_id', '=', sceneId).orderBy('o.created_at').orderBy('o.id').execute()) as ObjectRow[]
}

export async function findObject(db: Conn, objectId: string): Promise<ObjectRow | undefined> {
  return (await objects(db).where('o.id', '=', objectId).executeTakeFirst()) as ObjectRow | undefined
}

export function projectOfObject(db: Conn, objectId: string) {
  return db.selectFrom('scene_objects as o').innerJoin('scenes as s', 's.id', 'o.scene_id').select(['s.project_id', 'o.scene_id']).where('o.id', '=', objectId).executeTakeFirst()
}

export function projectOfTrim(db: Conn, trimId: string) {
  return db.selectFrom('trims as t').innerJoin('scenes as s', 's.id', 't.scene_id').select(['s.project_id', 't.scene_id']).where('t.id', '=', trimId).executeTakeFirst()
}

export async function countObjectsInScene(db: Conn, sceneId: string): Promise<number> {
  const row = await db.selectFrom('scene_objects').select((eb) => eb.fn.countAll<string>().as('n')).where('scene_id', '=', sceneId).executeTakeFirstOrThrow()
  return Number(row.n)
}

export async function insertObject(db: Conn, v: { id?: string; sceneId: string; name: string; stray: { k: number; n: number } | null; members: readonly string[]; createdBy: string | null }): Promise<string> {
  return db.transaction().execute(async (tx) => {
    const { id } = await tx
      .insertInto('scene_objects')
      .values({ ...(v.id ? { id: v.id } : {}), scene_id: v.sceneId, name: v.name, stray: JSON.stringify(v.stray), created_by: v.createdBy })
      .returning('id')
      .executeTakeFirstOrThrow()
    await tx.insertInto('object_members').values(v.members.map((instance_id, position) => ({ object_id: id, instance_id, position }))).execute()
    return id
  })
}

/** Name, stray settings and members (a member left out takes its trims along). Bumps the revision. */
export async function updateObject(db: Conn, objectId: string, v: { name?: string; stray?: { k: number; n: number } | null; members?: readonly string[] }): Promise<void> {
  await db.transaction().execute(async (tx) => {
    await tx
      .updateTable('scene_objects')
      .set((eb) => ({
        ...(v.name !== undefined ? { name: v.name } : {}),
        ...(v.stray !== undefined ? { stray: JSON.stringify(v.stray) } : {}),
        revision: eb('revision', '+', 1),
        updated_at: new Date(),
      }))
      .where('id', '=', objectId)
      .execute()
    if (v.members) {
      await tx.deleteFrom('object_members').where('object_id', '=', objectId).where('instance_id', 'not in', [...v.members]).execute()
      for (const [position, instance_id] of v.members.entries()) {
        await tx
          .insertInto('object_members')
          .values({ object_id: objectId, instance_id, position })
          .onConflict((oc) => oc.columns(['object_id', 'instance_id']).doUpdateSet({ position }))
          .execute()
      }
    }
  })
}

/** An object's revision moves on (one of its trims changed). */
export function bumpObject(db: Conn, objectId: string) {
  return db.updateTable('scene_objects').set((eb) => ({ revision: eb('revision', '+', 1), updated_at: new Date() })).where('id', '=', objectId).execute()
}

export function deleteObject(db: Conn, objectId: string) {
  return db.deleteFrom('scene_objects').where('id', '=', objectId).execute()
}

/** The objects a placement is a member of. */
export async function objectsOfInstance(db: Conn, instanceId: string): Promise<string[]> {
  return (await db.selectFrom('object_members').select('object_id').where('instance_id', '=', instanceId).execute()).map((r) => r.object_id)
}

const trims = (db: Conn) => db.selectFrom('trims').select(['id', 'scene_id', 'instance_id', 'object_id', 'mode', 'label', 'shape', 'revision', 'created_at', 'updated_at'])

export async function listTrimsOfScene(db: Conn, sceneId: string): Promise<TrimRow[]> {
  return (await trims(db).where('scene_id', '=', sceneId).orderBy('created_at').orderBy('id').execute()) as TrimRow[]
}

export async function listTrimsOfObject(db: Conn, objectId: string): Promise<TrimRow[]> {
  return (await trims(db).where('object_id', '=', objectId).orderBy('created_at').orderBy('id').execute()) as TrimRow[]
}

/** A placement's scene cuts. */
export async function listSceneCuts(db: Conn, instanceIds: readonly string[]): Promise<TrimRow[]> {
  if (!instanceIds.length) return []
  return (await trims(db).where('instance_id', 'in', [...instanceIds]).where('object_id', 'is', null).orderBy('created_at').orderBy('id').execute()) as TrimRow[]
}

export async function findTrim(db: Conn, trimId: string): Promise<TrimRow | undefined> {
  return (await trims(db).where('id', '=', trimId).executeTakeFirst()) as TrimRow | undefined
}

export async function countTrims(db: Conn, instanceId: string, objectId: string | null): Promise<number> {
  const q = db.selectFrom('trims').select((eb) => eb.fn.countAll<string>().as('n')).where('instance_id', '=', instanceId)
  const row = await (objectId ? q.where('object_id', '=', objectId) : q.where('object_id', 'is', null)).executeTakeFirstOrThrow()
  return Number(row.n)
}

export async function insertTrim(db: Conn, v: { id?: string; sceneId: string; instanceId: string; objectId: string | null; mode: 'keep' | 'cut'; label: string | null; shape: unknown; createdBy: string | null }): Promise<string> {
  const { id } = await db
    .insertInto('trims')
    .values({ ...(v.id ? { id: v.id } : {}), scene_id: v.sceneId, instance_id: v.instanceId, object_id: v.objectId, mode: v.mode, label: v.label, shape: JSON.stringify(v.shape), created_by: v.createdBy })
    .returning('id')
    .executeTakeFirstOrThrow()
  return id
}

export function updateTrim(db: Conn, trimId: string, v: { mode?: 'keep' | 'cut'; label?: string | null; shape?: unknown }) {
  return db
    .updateTable('trims')
    .set((eb) => ({
      ...(v.mode !== undefined ? { mode: v.mode } : {}),
      ...(v.label !== undefined ? { label: v.label } : {}),
      ...(v.shape !== undefined ? { shape: JSON.stringify(v.shape) } : {}),
      revision: eb('revision', '+', 1),
      updated_at: new Date(),
    }))
    .where('id', '=', trimId)
    .execute()
}

export function deleteTrim(db: Conn, trimId: string) {
  return db.deleteFrom('trims').where('id', '=', trimId).execute()
}

export function insertObjectRevision(db: Conn, v: { sceneId: string; objectId: string | null; trimId: string | null; action: 'created' | 'edited' | 'deleted'; state: unknown; userId: string | null }) {
  return db
    .insertInto('object_revisions')
    .values({ scene_id: v.sceneId, object_id: v.objectId, trim_id: v.trimId, action: v.action, state: JSON.stringify(v.state), user_id: v.userId })
    .execute()
}

export function listObjectRevisions(db: Conn, v: { sceneId: string; objectId?: string; before?: Date; limit: number }) {
  let q = db
    .selectFrom('object_revisions as r')
    .leftJoin('users as u', 'u.id', 'r.user_id')
    .select(['r.id', 'r.object_id', 'r.trim_id', 'r.action', 'r.state', 'r.created_at', 'u.name as user_name'])
    .where('r.scene_id', '=', v.sceneId)
  if (v.objectId) q = q.where('r.object_id', '=', v.objectId)
  if (v.before) q = q.where('r.created_at', '<=', v.before)
  return q.orderBy('r.created_at', 'desc').orderBy('r.id', 'desc').limit(v.limit).execute()
}

/**
 * Markers that read an object's points (a clearance of it, a size of it: the kinds' `objectParams`) go back to
 * pending with a new revision.
 */
export async function invalidateMarkersOfObjects(db: Conn, sceneId: string, objectIds: readonly string[]): Promise<{ id: string; revision: number }[]> {
  if (!objectIds.length || !OBJECT_PARAMS.length) return []
  return db
    .updateTable('markers')
    .set((eb) => ({ revision: eb('revision', '+', 1), check_state: 'pending' as const }))
    .where('scene_id', '=', sceneId)
    .where((eb) => eb.or(OBJECT_PARAMS.flatMap((param) => objectIds.map((id) => sql<boolean>`coalesce(params->${param}, 'null'::jsonb) @> to_jsonb(${id}::text)`))))
    .returning(['id', 'revision'])
    .execute()
}
