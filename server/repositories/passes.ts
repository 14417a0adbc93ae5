import { sql } from 'kysely'
import type { Conn } from '../db'

const passRows = (db: Conn) =>
  db
    .selectFrom('guest_links as g')
    .innerJoin('projects as p', 'p.id', 'g.project_id')
    .leftJoin('users as u', 'u.id', 'g.created_by')
    .selectAll('g')
    .select(['u.name as creator_name', 'p.name as project_name'])

export type PassWithPeopleRow = NonNullable<Awaited<ReturnType<typeof findPass>>>

export function insertPass(db: Conn, v: { projectId: string; email: string; name: string; allowDownload: boolean; tokenHash: string; createdBy: string; expiresAt: Date }) {
  return db
    .insertInto('guest_links')
    .values({ project_id: v.projectId, email: v.email, name: v.name, allow_download: v.allowDownload, token_hash: v.tokenHash, created_by: v.createdBy, expires_at: v.expiresAt })
    .returning('id')
    .executeTakeFirstOrThrow()
}

export function listPasses(db: Conn, projectId: string) {
  return passRows(db).where('g.project_id', '=', projectId).orderBy('g.created_at', 'desc').orderBy('g.id').execute()
}

export function findPass(db: Conn, id: string) {
  return passRows(db).where('g.id', '=', id).executeTakeFirst()
}

export function findPassByToken(db: Conn, tokenHash: string) {
  return passRows(db).where('g.token_hash', '=', tokenHash).executeTakeFirst()
}

/**
 * Swaps the one-time token for a guest session, atomically: only a live pass whose token was never used
 * gets one, so two opens of the same link cannot both succeed.
 */
export function openPass(db: Conn, tokenHash: string, sessionHash: string) {
  return db
    .updateTable('guest_links')
    .set({ session_hash: sessionHash, opened_at: sql`now()`, last_used_at: sql`now()` })
    .where('token_hash', '=', tokenHash)
    .where('opened_at', 'is', null)
    .where('revoked_at', 'is', null)
    .where('expires_at', '>', sql<Date>`now()`)
    .returning('id')
    .executeTakeFirst()
}

/** The live pass behind a guest session cookie (not revoked, not expired), with its project's name. */
export function findPassBySession(db: Conn, sessionHash: string) {
  return passRows(db).where('g.session_hash', '=', sessionHash).where('g.revoked_at', 'is', null).where('g.expires_at', '>', sql<Date>`now()`).executeTakeFirst()
}

/** At most one write a minute per pass: a scene page asks for many tiles. */
export function touchPass(db: Conn, id: string) {
  return db
    .updateTable('guest_links')
    .set({ last_used_at: sql`now()` })
    .where('id', '=', id)
    .where((eb) => eb.or([eb('last_used_at', 'is', null), eb('last_used_at', '<', sql<Date>`now() - interval '1 minute'`)]))
    .execute()
}

/** Ends the guest session (the guest left); the one-time token stays used. */
export function endPassSession(db: Conn, sessionHash: string) {
  return db.updateTable('guest_links').set({ session_hash: null }).where('session_hash', '=', sessionHash).returning('id').executeTakeFirst()
}

export function revokePass(db: Conn, id: string) {
  return db.updateTable('guest_links').set({ revoked_at: sql`now()` }).where('id', '=', id).where('revoked_at', 'is', null).execute()
}

export function projectOfPass(db: Conn, id: string) {
  return db.selectFrom('guest_links').select('project_id').where('id', '=', id).executeTakeFirst()
}
