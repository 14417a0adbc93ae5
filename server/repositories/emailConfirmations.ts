import type { Conn } from '../db'
import { consumeUserToken, findUserToken, insertUserToken, voidUserTokens } from './userTokens'

export const insertEmailConfirmation = (db: Conn, userId: string, tokenHash: string, expiresAt: Date) => insertUserToken(db, 'email_confirmations', userId, tokenHash, expiresAt)
/** Marks the token used and returns its user, atomically, only if it is unused and unexpired. */
export const consumeEmailConfirmation = (db: Conn, tokenHash: string) => consumeUserToken(db, 'email_confirmations', tokenHash)
export const findEmailConfirmation = (db: Conn, tokenHash: string) => findUserToken(db, 'email_confirmations', tokenHash)
/** Voids every other outstanding link of that person. */
export const voidEmailConfirmations = (db: Conn, userId: string) => voidUserTokens(db, 'email_confirmations', userId)

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
