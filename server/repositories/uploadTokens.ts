import { sql } from 'kysely'
import type { Conn } from '../db'

export function insertUploadToken(db: Conn, v: { projectId: string; label: string; tokenHash: string; hint: string; createdBy: string }) {
  return db
    .insertInto('upload_tokens')
    .values({ project_id: v.projectId, label: v.label, token_hash: v.tokenHash, token_hint: v.hint, created_by: v.createdBy })
    .returning('id')
    .executeTakeFirstOrThrow()
}

const tokenRows = (db: Conn) =>
  db.selectFrom('upload_tokens as t').leftJoin('users as u', 'u.id', 't.created_by').selectAll('t').select('u.name as creator_name')

export type UploadTokenWithCreatorRow = NonNullable<Awaited<ReturnType<typeof findUploadToken>>>

export function listUploadTokens(db: Conn, projectId: string) {
  return tokenRows(db).where('t.project_id', '=', projectId).orderBy('t.created_at', 'desc').execute()
}

export function findUploadToken(db: Conn, id: string) {
  return tokenRows(db).where('t.id', '=', id).executeTakeFirst()
}

/** A live (unrevoked) token by its hash; marks it used. */
export function useUploadToken(db: Conn, tokenHash: string) {
  return db
    .updateTable('upload_tokens')
    .set({ last_used_at: sql`now()` })
    .where('token_hash', '=', tokenHash)
    .where('revoked_at', 'is', null)
    .returning(['id', 'project_id', 'created_by'])
    .executeTakeFirst()
}

export function revokeUploadToken(db: Conn, id: string) {
  return db.updateTable('upload_tokens').set({ revoked_at: sql`now()` }).where('id', '=', id).where('revoked_at', 'is', null).execute()
}

export function projectOfUploadToken(db: Conn, id: string) {
  return db.selectFrom('upload_tokens').select('project_id').where('id', '=', id).executeTakeFirst()
}
