import { sql, type Updateable } from 'kysely'
import type { Conn } from '../db'
import { holderAlive } from '../jobs/leases'
import type { RegistrationsTable } from '../db/schema'

const rows = (db: Conn) =>
  db
    .selectFrom('registrations as r')
    .leftJoin('users as c', 'c.id', 'r.created_by')
    .leftJoin('users as a', 'a.id', 'r.accepted_by')
    .leftJoin('users as u', 'u.id', 'r.undone_by')
    .selectAll('r')
    .select(['c.name as created_by_name', 'a.name as accepted_by_name', 'u.name as undone_by_name'])

export type RegistrationRow = NonNullable<Awaited<ReturnType<typeof findRegistration>>>

export function findRegistration(db: Conn, id: string) {
  return rows(db).where('r.id', '=', id).executeTakeFirst()
}

/** Accepted and undone registrations and the undo records of a scene, newest first (drafts are not the record). */
export function listRecorded(db: Conn, sceneId: string) {
  return rows(db).where('r.scene_id', '=', sceneId).where('r.state', '!=', 'draft').orderBy('r.created_at', 'desc').orderBy('r.id').execute()
}

export interface NewRegistration {
  sceneId: string
  kind?: 'fit' | 'undo'
  state?: 'draft' | 'accepted' | 'undone'
  movingInstanceId: string
  heldInstanceId: string | null
  movingName: string
  heldName: string
  method?: 'svd' | 'horn' | null
  pairs?: unknown[]
  fit?: Record<string, unknown> | null
  icp?: Record<string, unknown> | null
  correction?: number[] | null
  rms?: number | null
  rmsSource?: RegistrationsTable['rms_source']
  registrationU?: number | null
  matrixBefore: number[]
  heldMatrix?: number[] | null
  matrixAfter?: number[] | null
  undoesId?: string | null
  userId: string | null
  acceptedAt?: Date | null
}

export function insertRegistration(db: Conn, v: NewRegistration) {
  return db
    .insertInto('registrations')
    .values({
      scene_id: v.sceneId,
      kind: v.kind ?? 'fit',
      state: v.state ?? 'draft',
      moving_instance_id: v.movingInstanceId,
      held_instance_id: v.heldInstanceId,
      moving_name: v.movingName,
      held_name: v.heldName,
      method: v.method ?? null,
      pairs: JSON.stringify(v.pairs ?? []),
      fit: v.fit ? JSON.stringify(v.fit) : undefined,
      icp: v.icp ? JSON.stringify(v.icp) : undefined,
      correction: v.correction ?? null,
      rms: v.rms ?? null,
      rms_source: v.rmsSource ?? null,
      registration_u: v.registrationU ?? null,
      matrix_before: v.matrixBefore,
      held_matrix: v.heldMatrix ?? null,
      matrix_after: v.matrixAfter ?? null,
      undoes_id: v.undoesId ?? null,
      created_by: v.userId,
      accepted_by: v.acceptedAt ? v.userId : null,
      accepted_at: v.acceptedAt ?? null,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
}

type Patch = Omit<Updateable<RegistrationsTable>, 'fit' | 'icp' | 'pairs'> & { fit?: Record<string, unknown> | null; icp?: Record<string, unknown> | null }

/**
 * Updates a registration; with `whenState`, only while it is in that state; with `whenRun`, only while its
 * ICP run is that one (its runId) (a stopped run never overwrites the run that replaced it).
 * Returns whether it did.
 */
export async function updateRegistration(db: Conn, id: string, patch: Patch, whenState?: 'draft' | 'accepted' | 'undone', whenRun?: string): Promise<boolean> {
  const { fit, icp, ...rest } = patch
  let q = db
    .updateTable('registrations')
    .set({
      ...rest,
      ...(fit !== undefined ? { fit: fit === null ? null : JSON.stringify(fit) } : {}),
      ...(icp !== undefined ? { icp: icp === null ? null : JSON.stringify(icp) } : {}),
      updated_at: new Date(),
    } as Updateable<RegistrationsTable>)
    .where('id', '=', id)
  if (whenState) q = q.where('state', '=', whenState)
  if (whenRun) q = q.where(sql<string>`icp->>'runId'`, '=', whenRun)
  const result = await q.executeTakeFirst()
  return Number(result.numUpdatedRows) > 0
}

function drafts(db: Conn, sceneId: string, movingInstanceId: string, userId: string | null, keep: string) {
  const q = db.deleteFrom('registrations').where('scene_id', '=', sceneId).where('moving_instance_id', '=', movingInstanceId).where('state', '=', 'draft').where('id', '!=', keep)
  return userId ? q.where('created_by', '=', userId) : q.where('created_by', 'is', null)
}

/** Earlier drafts of one person for one moving placement, except `keep`. */
export function listDrafts(db: Conn, sceneId: string, movingInstanceId: string, userId: string | null, keep: string) {
  const q = db.selectFrom('registrations').select('id').where('scene_id', '=', sceneId).where('moving_instance_id', '=', movingInstanceId).where('state', '=', 'draft').where('id', '!=', keep)
  return (userId ? q.where('created_by', '=', userId) : q.where('created_by', 'is', null)).execute()
}

/** A new fit replaces the person's earlier drafts for the placement. */
export function deleteDrafts(db: Conn, sceneId: string, movingInstanceId: string, userId: string | null, keep: string) {
  return drafts(db, sceneId, movingInstanceId, userId, keep).execute()
}

/** Per moving placement of the scene, its most recently accepted fit (undone ones and undo records left out). */
export function latestAcceptedFits(db: Conn, sceneId: string) {
  return db
    .selectFrom('registrations')
    .select(['id', 'moving_instance_id', 'held_instance_id', 'matrix_after', 'held_matrix', 'rms', 'rms_source', 'registration_u', 'accepted_at'])
    .distinctOn('moving_instance_id')
    .where('scene_id', '=', sceneId)
    .where('kind', '=', 'fit')
    .where('state', '=', 'accepted')
    .orderBy('moving_instance_id')
    .orderBy('accepted_at', 'desc')
    .execute()
}

/** Registrations whose ICP run was left 'running' (the server stopped): they are marked failed on start. */
/**
 * Fails the refinements whose running process is gone (no live beat in server_processes, or none recorded),
 * in one conditional update: a refinement another live process runs is left alone, and two sweepers fail
 * each one once. Returns the ones failed.
 */
export function failOrphanedRefinements(db: Conn, leaseMs: number, reason: string) {
  return db
    .updateTable('registrations')
    .set({
      icp: sql<string>`icp || jsonb_build_object('status', 'failed', 'stage', null, 'reason', ${reason}::text, 'finishedAt', to_char(now() at time zone 'utc', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"'))`,
      refine_owner: null,
      updated_at: new Date(),
    })
    .where('state', '=', 'draft')
    .where(sql<string>`icp->>'status'`, '=', 'running')
    .where((eb) => eb.not(holderAlive(eb.ref('refine_owner'), leaseMs)))
    .returning(['id', 'scene_id'])
    .execute()
}

export function projectOfRegistration(db: Conn, id: string) {
  return db.selectFrom('registrations as r').innerJoin('scenes as s', 's.id', 'r.scene_id').select('s.project_id').where('r.id', '=', id).executeTakeFirst()
}
