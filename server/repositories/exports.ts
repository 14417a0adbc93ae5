import { sql } from 'kysely'
import type { Conn } from '../db'
import type { ExportsTable } from '../db/schema'
import type { Insertable } from 'kysely'

export function insertExport(db: Conn, values: Insertable<ExportsTable>) {
  return db.insertInto('exports').values(values).returningAll().executeTakeFirstOrThrow()
}

export function findExport(db: Conn, id: string) {
  return db.selectFrom('exports').selectAll().where('id', '=', id).executeTakeFirst()
}

export function projectOfExport(db: Conn, id: string) {
  return db.selectFrom('exports').select('project_id').where('id', '=', id).executeTakeFirst()
}

/** The scene's exports, newest first. */
export function listExports(db: Conn, sceneId: string, limit: number) {
  return db.selectFrom('exports').selectAll().where('scene_id', '=', sceneId).orderBy('created_at', 'desc').orderBy('id').limit(limit).execute()
}

/** Takes a queued export for this worker; undefined when another took it or it is gone. */
export function claimExport(db: Conn, id: string) {
  return db
    .updateTable('exports')
    .set({ status: 'running', progress: 0, updated_at: sql`now()` })
    .where('id', '=', id)
    .where('status', '=', 'queued')
    .returningAll()
    .executeTakeFirst()
}

export function setExportProgress(db: Conn, id: string, progress: number) {
  return db.updateTable('exports').set({ progress, updated_at: sql`now()` }).where('id', '=', id).where('status', '=', 'running').execute()
}

export function finishExport(db: Conn, id: string, done: { objectKey: string; pointCount: number; byteSize: number }) {
  return db
    .updateTable('exports')
    .set({ status: 'ready', progress: 1, object_key: done.objectKey, point_count: done.pointCount, byte_size: done.byteSize, error: null, updated_at: sql`now()`, finished_at: sql`now()` })
    .where('id', '=', id)
    .where('status', '=', 'running')
    .executeTakeFirst()
}

export function failExport(db: Conn, id: string, error: string) {
  return db.updateTable('exports').set({ status: 'failed', error, updated_at: sql`now()`, finished_at: sql`now()` }).where('id', '=', id).execute()
}

/**
 * Fails running exports with no sign of life for `staleMs` (their worker died: the job is not retried, as
 * the person can simply start it again). Returns their ids.
 */
export function failStaleExports(db: Conn, staleMs: number) {
  return db
    .updateTable('exports')
    .set({
      status: 'failed',
      error: `The worker writing this export stopped (no sign of it for ${Math.round(staleMs / 1000)} s); nothing was kept. Start the export again.`,
      updated_at: sql`now()`,
      finished_at: sql`now()`,
    })
    .where('status', '=', 'running')
    .where('updated_at', '<', sql<Date>`now() - make_interval(secs => ${staleMs / 1000})`)
    .returning('id')
    .execute()
}

/** Shows the export is alive while a pass waits on slow storage (see failStaleExports). */
export function touchExport(db: Conn, id: string) {
  return db.updateTable('exports').set({ updated_at: sql`now()` }).where('id', '=', id).where('status', '=', 'running').execute()
}
