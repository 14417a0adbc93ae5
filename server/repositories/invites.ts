import { sql } from 'kysely'
import type { Conn } from '../db'
import type { InvitesTable } from '../db/schema'

const inviteRows = (db: Conn) =>
  db
    .selectFrom('invites as i')
    .innerJoin('projects as p', 'p.id', 'i.project_id')
    .leftJoin('users as u', 'u.id', 'i.invited_by')
    .selectAll('i')
    .select(['u.name as inviter_name', 'p.name as project_name'])

export type InviteWithPeopleRow = NonNullable<Awaited<ReturnType<typeof findInvite>>>

export function insertInvite(db: Conn, v: { projectId: string; email: string; role: InvitesTable['role']; tokenHash: string; invitedBy: string; expiresAt: Date }) {
  return db
    .insertInto('invites')
    .values({ project_id: v.projectId, email: v.email, role: v.role, token_hash: v.tokenHash, invited_by: v.invitedBy, expires_at: v.expiresAt })
    .returning('id')
    .executeTakeFirstOrThrow()
}

/** Pending: neither accepted nor withdrawn (expired ones included; they can be sent again). */
export function listPendingInvites(db: Conn, projectId: string) {
  return inviteRows(db).where('i.project_id', '=', projectId).where('i.accepted_at', 'is', null).where('i.revoked_at', 'is', null).orderBy('i.created_at', 'desc').orderBy('i.id').execute()
}

export function findInvite(db: Conn, id: string) {
  return inviteRows(db).where('i.id', '=', id).executeTakeFirst()
}

export function findInviteByToken(db: Conn, tokenHash: string) {
  return inviteRows(db).where('i.token_hash', '=', tokenHash).executeTakeFirst()
}

/** The row of a token, locked until the transaction ends (accepting is one at a time). */
export function lockInviteByToken(db: Conn, tokenHash: string) {
  return db.selectFrom('invites').selectAll().where('token_hash', '=', tokenHash).forUpdate().executeTakeFirst()
}

export function findPendingInviteFor(db: Conn, projectId: string, email: string) {
  return db
    .selectFrom('invites')
    .selectAll()
    .where('project_id', '=', projectId)
    .where('email', '=', email)
    .where('accepted_at', 'is', null)
    .where('revoked_at', 'is', null)
    .orderBy('created_at', 'desc')
    .executeTakeFirst()
}

/** A new token and a new week: the old token stops working, since only the new hash is kept. */
export function renewInvite(db: Conn, id: string, tokenHash: string, expiresAt: Date) {
  return db
    .updateTable('invites')
    .set({ token_hash: tokenHash, expires_at: expiresAt, last_sent_at: sql`now()` })
    .where('id', '=', id)
    .where('accepted_at', 'is', null)
    .where('revoked_at', 'is', null)
    .returning('id')
    .executeTakeFirst()
}

export function revokeInvite(db: Conn, id: string) {
  return db.updateTable('invites').set({ revoked_at: sql`now()` }).where('id', '=', id).where('accepted_at', 'is', null).where('revoked_at', 'is', null).execute()
}

export function markInviteAccepted(db: Conn, id: string, userId: string) {
  return db.updateTable('invites').set({ accepted_at: sql`now()`, accepted_by: userId }).where('id', '=', id).execute()
}

export function projectOfInvite(db: Conn, id: string) {
  return db.selectFrom('invites').select('project_id').where('id', '=', id).executeTakeFirst()
}
