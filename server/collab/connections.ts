import type { CloseCodeName } from '@shared/collab/documents'
import type { Connection } from './room'

/**
 * Every open live connection, findable by account, session and project, so that the events that take a
 * right away (a member removed, a role changed, signing out, a new password, a project deleted) end the
 * connections they concern at once: each is marked ended synchronously (its room applies nothing more from
 * it) and its socket closed with a named code (shared/collab/documents.ts CLOSE_CODES).
 */
export class ConnectionRegistry {
  private readonly byUser = new Map<string, Set<Connection>>()
  private readonly bySession = new Map<string, Set<Connection>>()
  private readonly byProject = new Map<string, Set<Connection>>()

  constructor(private readonly end: (conn: Connection, code: CloseCodeName, reason: string) => void) {}

  add(conn: Connection): void {
    if (conn.userId) put(this.byUser, conn.userId, conn)
    if (conn.sessionId) put(this.bySession, conn.sessionId, conn)
    put(this.byProject, conn.projectId, conn)
  }

  remove(conn: Connection): void {
    if (conn.userId) take(this.byUser, conn.userId, conn)
    if (conn.sessionId) take(this.bySession, conn.sessionId, conn)
    take(this.byProject, conn.projectId, conn)
  }

  /** How many are open (for tests and the bench). */
  get size(): number {
    let n = 0
    for (const set of this.byProject.values()) n += set.size
    return n
  }

  /** A member's role changed (null: removed, or left): their connections to that project end. */
  membershipChanged(projectId: string, userId: string, role: string | null): void {
    for (const conn of [...(this.byUser.get(userId) ?? [])]) {
      if (conn.projectId !== projectId || conn.passId) continue
      if (role === null) this.end(conn, 'accessEnded', 'you are no longer a member of this project')
      else if (role !== conn.role) this.end(conn, 'roleChanged', `your role is now ${role}`)
    }
  }

  /** One session ended (signed out), named by its SHA-256 (as connections keep it). */
  sessionEnded(sessionHash: string): void {
    for (const conn of [...(this.bySession.get(sessionHash) ?? [])]) this.end(conn, 'signedOut', 'signed out')
  }

  /** Every session of an account ended (a new password, a reset). */
  userSignedOut(userId: string, reason: string): void {
    for (const conn of [...(this.byUser.get(userId) ?? [])]) if (!conn.passId) this.end(conn, 'signedOut', reason)
  }

  /** The project was deleted: everyone on its scenes, guests included. */
  projectDeleted(projectId: string): void {
    for (const conn of [...(this.byProject.get(projectId) ?? [])]) this.end(conn, 'accessEnded', 'this project was deleted')
  }
}

function put(map: Map<string, Set<Connection>>, key: string, conn: Connection): void {
  let set = map.get(key)
  if (!set) map.set(key, (set = new Set()))
  set.add(conn)
}

function take(map: Map<string, Set<Connection>>, key: string, conn: Connection): void {
  const set = map.get(key)
  if (!set) return
  set.delete(conn)
  if (set.size === 0) map.delete(key)
}
