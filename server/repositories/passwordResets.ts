import type { Conn } from '../db'

export function insertPasswordReset(db: Conn, userId: string, tokenHash: string, expiresAt: Date) {
  return db.insertInto('password_resets').values({ user_id: userId, token_hash: tokenHash, expires_at: expiresAt }).execute()
}

/** Marks the token used and returns its user, atomically, only if it is unused and unexpired. */
export function consumePasswordReset(db: Conn, tokenHash: string) {
  return db
    .updateTable('password_resets')
    .set({ used_at: new Date() })
    .where('token_hash', '=', tokenHash)
    .where('used_at', 'is', null)
    .where('expires_at', '>', new Date())
    .returning(['user_id'])
    .executeTakeFirst()
}

export function findPasswordReset(db: Conn, tokenHash: string) {
  return db.selectFrom('password_resets').select(['used_at', 'expires_at']).where('token_hash', '=', tokenHash).executeTakeFirst()
}

/** A successful reset voids every other outstanding link of that person. */
export function voidPasswordResets(db: Conn, userId: string) {
  return db.updateTable('password_resets').set({ used_at: new Date() }).where('user_id', '=', userId).where('used_at', 'is', null).execute()
}
