import { sql } from 'kysely'
import type { Conn } from '../db'
import { holderAlive } from '../jobs/leases'
import type { CheckState, ReviewState } from '@shared/collab/states'
import { DEPENDENT_PARAMS, PLACEMENT_PARAMS, type MarkerKind } from '@shared/schemas'

export interface StoredAnchor {
  instanceId: string
  x: number
  y: number
  z: number
}

/** A marker with the names of its author, last editor and reviewer, and a count of its comment threads. */
const markerRows = (db: Conn) =>
  db
    .selectFrom('markers as m')
    .leftJoin('users as c', 'c.id', 'm.created_by')
    .leftJoin('users as u', 'u.id', 'm.updated_by')
    .leftJoin('users as r', 'r.id', 'm.review_by')
    .selectAll('m')
    .select(['c.name as created_by_name', 'u.name as updated_by_name', 'r.name as review_by_name'])
    .select((eb) => [
      eb.selectFrom('comments as k').whereRef('k.marker_id', '=', 'm.id').where('k.thread_id', 'is', null).select((e) => e.fn.countAll<string>().as('n')).as('comment_threads'),
      eb
        .selectFrom('comments as k')
        .whereRef('k.marker_id', '=', 'm.id')
        .where('k.thread_id', 'is', null)
        .where('k.resolved_at', 'is', null)
        .select((e) => e.fn.countAll<string>().as('n'))
        .as('comment_open'),
      eb.selectFrom('comments as k').whereRef('k.marker_id', '=', 'm.id').select((e) => e.fn.countAll<string>().as('n')).as('comment_count'),
      eb.selectFrom('comments as k').whereRef('k.marker_id', '=', 'm.id').select((e) => e.fn.max('k.created_at').as('t')).as('comment_last_at'),
    ])

export type MarkerWithPeopleRow = NonNullable<Awaited<ReturnType<typeof findMarker>>>

export function listMarkers(db: Conn, sceneId: string) {
  return markerRows(db).where('m.scene_id', '=', sceneId).orderBy('m.created_at').orderBy('m.id').execute()
}

export function findMarker(db: Conn, markerId: string) {
  return markerRows(db).where('m.id', '=', markerId).executeTakeFirst()
}

/** A marker's own columns only (no people, no comment counts): what the write checks need. */
export function findMarkerCore(db: Conn, markerId: string) {
  return db.selectFrom('markers').selectAll().where('id', '=', markerId).executeTakeFirst()
}
export type MarkerCoreRow = NonNullable<Awaited<ReturnType<typeof findMarkerCore>>>

/** The scene and project of a marker (for links in e-mails and access). */
export function placeOfMarker(db: Conn, markerId: string) {
  return db.selectFrom('markers as m').innerJoin('scenes as s', 's.id', 'm.scene_id').select(['m.id', 'm.scene_id', 's.project_id', 's.name as scene_name']).where('m.id', '=', markerId).executeTakeFirst()
}

export function projectOfMarker(db: Conn, markerId: string) {
  return db.selectFrom('markers as m').innerJoin('scenes as s', 's.id', 'm.scene_id').select('s.project_id').where('m.id', '=', markerId).executeTakeFirst()
}

export async function countMarkersInScene(db: Conn, sceneId: string): Promise<number> {
  const row = await db.selectFrom('markers').select((e) => e.fn.countAll<string>().as('n')).where('scene_id', '=', sceneId).executeTakeFirstOrThrow()
  return Number(row.n)
}

/**
 * The scene a marker id belongs to: its row's, or, once deleted, the scene of its first revision (the scene
 * it was made in; an id is never taken again, see `markerIdUsed`).
 */
export async function sceneOfMarkerId(db: Conn, markerId: string): Promise<{ scene_id: string; project_id: string } | undefined> {
  const row = await db.selectFrom('markers as m').innerJoin('scenes as s', 's.id', 'm.scene_id').select(['m.scene_id', 's.project_id']).where('m.id', '=', markerId).executeTakeFirst()
  if (row) return row
  return db
    .selectFrom('marker_revisions as r')
    .innerJoin('scenes as s', 's.id', 'r.scene_id')
    .select(['r.scene_id', 's.project_id'])
    .where('r.marker_id', '=', markerId)
    .orderBy('r.id')
    .limit(1)
    .executeTakeFirst()
}

/** Is this id a marker's now, or was it ever (a revision names it)? */
export async function markerIdUsed(db: Conn, markerId: string): Promise<boolean> {
  const hit = await db
    .selectFrom('markers')
    .select('id')
    .where('id', '=', markerId)
    .unionAll(db.selectFrom('marker_revisions').select('marker_id as id').where('marker_id', '=', markerId))
    .limit(1)
    .executeTakeFirst()
  return hit !== undefined
}

export function countMarkersOfKind(db: Conn, sceneId: string, kind: MarkerKind) {
  return db
    .selectFrom('markers')
    .select((e) => e.fn.countAll<string>().as('n'))
    .where('scene_id', '=', sceneId)
    .where('kind', '=', kind)
    .executeTakeFirstOrThrow()
}

export function insertMarker(
  db: Conn,
  v: { id?: string; sceneId: string; kind: MarkerKind; label: string; anchors: StoredAnchor[]; params: Record<string, unknown>; userId: string | null },
) {
  return db
    .insertInto('markers')
    .values({
      ...(v.id ? { id: v.id } : {}),
      scene_id: v.sceneId,
      kind: v.kind,
      label: v.label,
      anchors: JSON.stringify(v.anchors),
      params: JSON.stringify(v.params),
      created_by: v.userId,
      updated_by: v.userId,
    })
    .returning(['id', 'revision'])
    .executeTakeFirstOrThrow()
}

/** Replaces what changed and bumps the revision when geometry or params changed (a check is then due). */
export function updateMarker(
  db: Conn,
  markerId: string,
  v: { label?: string; anchors?: StoredAnchor[]; params?: Record<string, unknown>; userId: string | null },
) {
  const geometry = v.anchors !== undefined || v.params !== undefined
  return db
    .updateTable('markers')
    .set((eb) => ({
      ...(v.label !== undefined ? { label: v.label } : {}),
      ...(v.anchors !== undefined ? { anchors: JSON.stringify(v.anchors) } : {}),
      ...(v.params !== undefined ? { params: JSON.stringify(v.params) } : {}),
      ...(geometry ? { revision: eb('revision', '+', 1), check_state: 'pending' as const } : {}),
      updated_by: v.userId,
      updated_at: new Date(),
    }))
    .where('id', '=', markerId)
    .returning(['id', 'revision'])
    .executeTakeFirst()
}

export function deleteMarker(db: Conn, markerId: string) {
  return db.deleteFrom('markers').where('id', '=', markerId).executeTakeFirst()
}

/** Stores a check only when it was computed for the marker's current revision (latest wins). */
/**
 * Stores a check: only for the revision it was computed for, only while the marker is still pending, and,
 * with `owner`, only while that process holds the marker's check (server/jobs/leases.ts); the hold ends with
 * it. A check is so stored once: a second store of the same revision, or a late one of a process whose hold
 * was taken over, changes nothing.
 */
export async function storeCheck(db: Conn, markerId: string, revision: number, state: CheckState, check: unknown, owner: string | null = null): Promise<boolean> {
  let q = db
    .updateTable('markers')
    .set({ check_state: state, check: JSON.stringify(check), check_owner: null })
    .where('id', '=', markerId)
    .where('revision', '=', revision)
    .where('check_state', '=', 'pending')
  if (owner) q = q.where('check_owner', '=', owner)
  const result = await q.executeTakeFirst()
  return result.numUpdatedRows > 0n
}

/**
 * Takes the hold on a marker's pending check for process `owner`: free, already its own, or held by a
 * process that is no longer alive. Returns the marker's revision, or nothing (not pending, gone, or held by
 * a live process, which stores it itself).
 */
export async function holdCheck(db: Conn, markerId: string, owner: string, leaseMs: number) {
  return db
    .updateTable('markers')
    .set({ check_owner: owner })
    .where('id', '=', markerId)
    .where('check_state', '=', 'pending')
    .where((eb) => eb.or([eb('check_owner', 'is', null), eb('check_owner', '=', owner), eb.not(holderAlive(eb.ref('check_owner'), leaseMs))]))
    .returning(['id', 'revision', 'check_owner'])
    .executeTakeFirst()
}

/**
 * Pending checks nobody alive holds, taken for `owner` (at most `limit`, rows another sweeper is taking are
 * skipped): held by a dead process, or by none for longer than `graceMs` (the process that made them pending
 * takes them itself meanwhile).
 */
export async function takeOrphanedChecks(db: Conn, owner: string, leaseMs: number, graceMs: number, limit: number) {
  return db
    .updateTable('markers')
    .set({ check_owner: owner })
    .where('id', 'in', (eb) =>
      eb
        .selectFrom('markers as m')
        .select('m.id')
        .where('m.check_state', '=', 'pending')
        .where((w) =>
          w.or([
            w.and([w('m.check_owner', 'is', null), w('m.updated_at', '<', sql<Date>`now() - make_interval(secs => ${graceMs / 1000})`)]),
            w.and([w('m.check_owner', 'is not', null), w('m.check_owner', '<>', owner), w.not(holderAlive(w.ref('m.check_owner'), leaseMs))]),
          ]),
        )
        .orderBy('m.updated_at')
        .limit(limit)
        .forUpdate()
        .skipLocked(),
    )
    .where('check_state', '=', 'pending')
    .returning(['id', 'revision'])
    .execute()
}

/** The marker as it is after a check that was not stored (did its revision move on? who holds it?). */
export function checkHold(db: Conn, markerId: string) {
  return db.selectFrom('markers').select(['revision', 'check_state', 'check_owner']).where('id', '=', markerId).executeTakeFirst()
}

/**
 * Markers that depend on a placement: anchored on it, naming it in a param (a section cutting it, a clearance
 * of it as the object: the kinds' `placementParams`), and those measured through such a marker. They go back
 * to pending with a new revision.
 */
export async function invalidateMarkersOfInstance(db: Conn, sceneId: string, instanceId: string): Promise<{ id: string; revision: number }[]> {
  const direct = await db
    .updateTable('markers')
    .set((eb) => ({ revision: eb('revision', '+', 1), check_state: 'pending' as const }))
    .where('scene_id', '=', sceneId)
    .where((eb) =>
      eb.or([
        sql<boolean>`anchors @> ${JSON.stringify([{ instanceId }])}::jsonb`,
        // A param naming the placement, one id or a list (a jsonb array contains a scalar it holds).
        ...PLACEMENT_PARAMS.map((param) => sql<boolean>`coalesce(params->${param}, 'null'::jsonb) @> to_jsonb(${instanceId}::text)`),
      ]),
    )
    .returning(['id', 'revision'])
    .execute()
  const dependants = await invalidateDependents(db, sceneId, direct.map((m) => m.id))
  return [...direct, ...dependants]
}

/**
 * Markers measured through any of these markers (a clearance through its section: the kinds' `dependsOn`
 * params, shared/kinds) go back to pending.
 */
export async function invalidateDependents(db: Conn, sceneId: string, markerIds: string[], ofKind?: MarkerKind): Promise<{ id: string; revision: number }[]> {
  // Only the params that can name a marker of this kind (none: no query at all, as for most edits).
  const params = ofKind ? DEPENDENT_PARAMS.filter((d) => d.on === ofKind) : DEPENDENT_PARAMS
  if (markerIds.length === 0 || params.length === 0) return []
  return db
    .updateTable('markers')
    .set((eb) => ({ revision: eb('revision', '+', 1), check_state: 'pending' as const }))
    .where('scene_id', '=', sceneId)
    .where((eb) =>
      eb.or(
        // A param naming the marker: one id, or a list holding it (a jsonb array contains a scalar it holds).
        params.flatMap(({ kind, param }) => markerIds.map((id) => eb.and([eb('kind', '=', kind), sql<boolean>`coalesce(params->${param}, 'null'::jsonb) @> to_jsonb(${id}::text)`]))),
      ),
    )
    .returning(['id', 'revision'])
    .execute()
}

/** Every marker of a project back to pending (its tolerance or margin changed). */
export function invalidateMarkersOfProject(db: Conn, projectId: string) {
  return db
    .updateTable('markers')
    .set((eb) => ({ revision: eb('revision', '+', 1), check_state: 'pending' as const }))
    .where('scene_id', 'in', db.selectFrom('scenes').select('id').where('project_id', '=', projectId))
    .returning(['id', 'revision'])
    .execute()
}

/** The project of each marker (markers since deleted are left out). */
export function projectsOfMarkers(db: Conn, ids: readonly string[]) {
  if (!ids.length) return Promise.resolve([])
  return db.selectFrom('markers as m').innerJoin('scenes as s', 's.id', 'm.scene_id').select(['m.id', 's.project_id']).where('m.id', 'in', ids).execute()
}

/** Up to `limit` pending markers of a project, oldest change first. */
export function pendingMarkersOfProject(db: Conn, projectId: string, limit: number) {
  return db
    .selectFrom('markers as m')
    .innerJoin('scenes as s', 's.id', 'm.scene_id')
    .select(['m.id', 'm.revision'])
    .where('s.project_id', '=', projectId)
    .where('m.check_state', '=', 'pending')
    .orderBy('m.updated_at')
    .limit(limit)
    .execute()
}


/**
 * Sets a marker's review. A sign-off is stored only while the marker's check is not pending (a conditional
 * update, so a check started meanwhile cannot slip under it); returns the updated row's id, or nothing.
 */
export function setReview(db: Conn, markerId: string, v: { state: ReviewState; userId: string | null; note: string | null }) {
  let q = db
    .updateTable('markers')
    .set({ review_state: v.state, review_by: v.userId, review_at: new Date(), review_note: v.note })
    .where('id', '=', markerId)
  if (v.state === 'signed-off') q = q.where('check_state', '<>', 'pending')
  return q.returning(['id']).executeTakeFirst()
}

/** Signed-off markers among these go back to open, with the reason as the note; returns those that did. */
export async function reopenSignedOff(db: Conn, markerIds: readonly string[], note: string, userId: string | null): Promise<{ id: string }[]> {
  if (markerIds.length === 0) return []
  return db
    .updateTable('markers')
    .set({ review_state: 'open', review_by: userId, review_at: new Date(), review_note: note })
    .where('id', 'in', [...markerIds])
    .where('review_state', '=', 'signed-off')
    .returning(['id'])
    .execute()
}
