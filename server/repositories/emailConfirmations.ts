import type { Conn } from '../db'

export function insertEmailConfirmation(db: Conn, userId: string, tokenHash: string, expiresAt: Date) {
  return db.insertInto('email_confirmations').values({ user_id: userId, token_hash: tokenHash, expires_at: expiresAt }).execute()
}

/** Marks the token used and returns its user, atomically, only if it is unused and unexpired. */
export function consumeEmailConfirmation(db: Conn, tokenHash: string) {
  return db
    .updateTable('email_confirmations')
    .set({ used_at: new Date() })
    .where('token_hash', '=', tokenHash)
    .where('used_at', 'is', null)
    .where('expires_at', '>', new Date())
    .returning(['user_id'])
    .executeTakeFirst()
}

export function findEmailConfirmation(db: Conn, tokenHash: string) {
  return db.selectFrom('email_confirmations').select(['used_at', 'expires_at']).where('token_hash', '=', tokenHash).executeTakeFirst()
}

/** A new link, or a confirmation, voids every other outstanding link of that person. */
export function voidEmailConfirmations(db: Conn, userId: string) {
  return db.updateTable('email_confirmations').set({ used_at: new Date() }).where('user_id', '=', userId).where('used_at', 'is', null).execute()
}

export function markEmailConfirmed(db: Conn, userId: string) {
  return db.updateTable('users').set({ email_confirmed_at: new Date() }).where('id', '=', userId).where('email_confirmed_at', 'is', null).execute()
}

export function findSignInFailures(db: Conn, email: string) {
  return db.selectFrom('sign_in_failures').selectAll().where('email', '=', email).executeTakeFirst()
}

/** Counts one more failure for the address, returning the new count. */
export async function recordSignInFailure(db: Conn, email: string): Promise<number> {
  const row = await db
    .insertInto('sign_in_failures')
    .values({ email, failures: 1, last_failed_at: new Date() })
    .onConflict((oc) => oc.column('email').doUpdateSet((eb) => ({ failures: eb('sign_in_failures.failures', '+', 1), last_failed_at: new Date() })))
    .returning('failures')
    .executeTakeFirstOrThrow()
  return row.failures
}

export function clearSignInFailures(db: Conn, email: string) {
  return db.deleteFrom('sign_in_failures').where('email', '=', email).execute()
}
