import type { Conn } from '../db'
import { consumeUserToken, findUserToken, insertUserToken, voidUserTokens } from './userTokens'

export const insertPasswordReset = (db: Conn, userId: string, tokenHash: string, expiresAt: Date) => insertUserToken(db, 'password_resets', userId, tokenHash, expiresAt)
/** Marks the token used and returns its user, atomically, only if it is unused and unexpired. */
export const consumePasswordReset = (db: Conn, tokenHash: string) => consumeUserToken(db, 'password_resets', tokenHash)
export const findPasswordReset = (db: Conn, tokenHash: string) => findUserToken(db, 'password_resets', tokenHash)
/** Voids every other outstanding link of that person. */
export const voidPasswordResets = (db: Conn, userId: string) => voidUserTokens(db, 'password_resets', userId)
