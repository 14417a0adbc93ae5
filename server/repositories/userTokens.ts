import type { Conn } from '../db'

/**
 * The one-time e-mailed links of an account (password resets, address confirmations): tables of the same
 * shape (user_id, token_hash stored as SHA-256, expires_at, used_at), read and written the same way.
 */
export type UserTokenTable = 'password_resets' | 'email_confirmations'

export function insertUserToken(db: Conn, table: UserTokenTable, userId: string, tokenHash: string, expiresAt: Date) {
  return db.insertInto(table).values({ user_id: userId, token_hash: tokenHash, expires_at: expiresAt }).execute()
}

/** Marks the token used and returns its user, atomically, only if it is unused and unexpired. */
export function consumeUserToken(db: Conn, table: UserTokenTable, tokenHash: string) {
  return db
    .updateTable(table)
    .set({ used_at: new Date() })
    .where('token_hash', '=', tokenHash)
    .where('used_at', 'is', null)
    .where('expires_at', '>', new Date())
    .returning(['user_id'])
    .executeTakeFirst()
}

export function findUserToken(db: Conn, table: UserTokenTable, tokenHash: string) {
  return db.selectFrom(table).select(['used_at', 'expires_at']).where('token_hash', '=', tokenHash).executeTakeFirst()
}

/** Voids every outstanding link of that person in the table (a newer link, or the link's job done). */
export function voidUserTokens(db: Conn, table: UserTokenTable, userId: string) {
  return db.updateTable(table).set({ used_at: new Date() }).where('user_id', '=', userId).where('used_at', 'is', null).execute()
}
