import { sql } from 'kysely'
import type { Conn } from '../db'

export function insertUploadToken(db: Conn, v: { projectId: string; label: string; tokenHash: string; hint: string; createdBy: string; expiresInDays: number }) {
  return db
    .insertInto('upload_tokens')
    .values({ project_id: v.projectId, label: v.label, token_hash: v.tokenHash, token_hint: v.hint, created_by: v.createdBy, expires_at: sql<Date>`now() + make_interval(days => ${v.expiresInDays})` })
    .returning('id')
    .executeTakeFirstOrThrow()
}

const tokenRows = (db: Conn) =>
  db
    .selectFrom('upload_tokens as t')
    .leftJoin('users as u', 'u.id', 't.created_by')
    .selectAll('t')
    .select((eb) => [
      'u.name as creator_name',
      eb
        .exists(eb.selectFrom('memberships as m').select('m.user_id').whereRef('m.project_id', '=', 't.project_id').whereRef('m.user_id', '=', 't.created_by').where('m.role', '<>', 'guest'))
        .as('maker_is_member'),
    ])

export type UploadTokenWithCreatorRow = NonNullable<Awaited<ReturnType<typeof findUploadToken>>>

export function listUploadTokens(db: Conn, projectId: string) {
  return tokenRows(db).where('t.project_id', '=', projectId).orderBy('t.created_at', 'desc').execute()
}

export function findUploadToken(db: Conn, id: string) {
  return tokenRows(db).where('t.id', '=', id).executeTakeFirst()
}

/**
 * An unrevoked token by its hash, with whether it has expired and whether its maker is still a member of
 * its project (a key stops working when its maker leaves: checked at each use, so no event has to reach it).
 */
export function findLiveUploadToken(db: Conn, tokenHash: string) {
  return db
    .selectFrom('upload_tokens as t')
    .select((eb) => [
      't.id',
      't.project_id',
      't.created_by',
      't.expires_at',
      sql<boolean>`t.expires_at <= now()`.as('expired'),
      eb
        .exists(eb.selectFrom('memberships as m').select('m.user_id').whereRef('m.project_id', '=', 't.project_id').whereRef('m.user_id', '=', 't.created_by').where('m.role', '<>', 'guest'))
        .as('maker_is_member'),
    ])
    .where('t.token_hash', '=', tokenHash)
    .where('t.revoked_at', 'is', null)
    .executeTakeFirst()
}

export function markUploadTokenUsed(db: Conn, id: string) {
  return db.updateTable('upload_tokens').set({ last_used_at: sql`now()` }).where('id', '=', id).execute()
}

export function revokeUploadToken(db: Conn, id: string) {
  return db.updateTable('upload_tokens').set({ revoked_at: sql`now()` }).where('id', '=', id).where('revoked_at', 'is', null).execute()
}

export function projectOfUploadToken(db: Conn, id: string) {
  return db.selectFrom('upload_tokens').select('project_id').where('id', '=', id).executeTakeFirst()
}
