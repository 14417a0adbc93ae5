import type { Adapter, DatabaseSession } from 'lucia'
import { hashSecret } from './tokens'

/**
 * A lucia adapter that keeps only the SHA-256 of each session id in the database, as every other secret here
 * is kept (reset links, invitations, rig keys, viewing passes). A copy of the `sessions` table (a backup, a
 * leaked read replica) then gives nobody a cookie that signs in.
 *
 * lucia hands the adapter the id from the cookie; this wrapper hashes it on the way in and, on the way out,
 * gives lucia back the id it was asked about, so the session lucia returns carries the cookie's own value
 * (lucia renews the cookie from `session.id`). `getUserSessions` can only return hashes: nothing here calls it.
 */
export class HashedSessionAdapter implements Adapter {
  constructor(private readonly inner: Adapter) {}

  async getSessionAndUser(sessionId: string): ReturnType<Adapter['getSessionAndUser']> {
    const [session, user] = await this.inner.getSessionAndUser(hashSecret(sessionId))
    return [session ? { ...session, id: sessionId } : null, user]
  }

  getUserSessions(userId: string): Promise<DatabaseSession[]> {
    return this.inner.getUserSessions(userId)
  }

  setSession(session: DatabaseSession): Promise<void> {
    return this.inner.setSession({ ...session, id: hashSecret(session.id) })
  }

  updateSessionExpiration(sessionId: string, expiresAt: Date): Promise<void> {
    return this.inner.updateSessionExpiration(hashSecret(sessionId), expiresAt)
  }

  deleteSession(sessionId: string): Promise<void> {
    return this.inner.deleteSession(hashSecret(sessionId))
  }

  deleteUserSessions(userId: string): Promise<void> {
    return this.inner.deleteUserSessions(userId)
  }

  deleteExpiredSessions(): Promise<void> {
    return this.inner.deleteExpiredSessions()
  }
}
