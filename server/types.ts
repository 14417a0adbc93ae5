import type { Session, User } from 'lucia'
import type pino from 'pino'
import type { Auth } from './auth/lucia'
import type { PasswordHasher } from './auth/password'
import type { Config } from './config'
import type { Db } from './db'
import type PgBoss from 'pg-boss'
import type { Mailer } from './mail/mailer'
import type { ObjectStore } from './storage/objects'
import type { MarkerChecker } from './markers/checker'
import type { RegistrationJobs } from './registration/jobs'

export type AuthUser = User

/** A guest holding an opened viewing pass: no account, one project, read-only. */
export interface Guest {
  passId: string
  projectId: string
  projectName: string
  name: string
  email: string
  expiresAt: Date
  /** The owner let this pass download original scan files. */
  allowDownload: boolean
  /** SHA-256 of the guest session cookie's value. */
  sessionHash: string
}

declare global {
  // Express's own extension point for per-request state.
  // eslint-disable-next-line @typescript-eslint/no-namespace
  namespace Express {
    interface Request {
      user: User | null
      authSession: Session | null
      /** Set by the guest session middleware when the request carries a live viewing pass's cookie. */
      guest: Guest | null
    }
  }
}

/** What route handlers and services reach: built once per server in app.ts. */
export interface Services {
  config: Config
  db: Db
  auth: Auth
  hasher: PasswordHasher
  mailer: Mailer
  objects: ObjectStore
  boss: PgBoss
  scanIndexes: ScanIndexes
  /** Marker checks, latest wins (server/markers/checker.ts). */
  markerChecks: MarkerChecker
  /** ICP refinements of registrations, one per scene, latest wins (server/registration/jobs.ts). */
  registrationJobs: RegistrationJobs
  /** The live documents, told of every change made through the API (server/collab/liveSync.ts). */
  live: LiveSync
  log: pino.Logger
  /**
   * This server process's id, random per start (server/jobs/leases.ts): recorded on the work it holds
   * (markers.check_owner, registrations.refine_owner) so that other processes know when to take it over.
   */
  processId: string
  /** Origin for links in e-mails: PUBLIC_URL, else the address the server listens on. */
  publicOrigin(): string
}

/** Which stored points count (scan frame): a placement's scene cuts (shared/measure/trims.ts keepsPoint). */
export type PointFilter = (x: number, y: number, z: number) => boolean

/** Nearest-point search over stored scans, with their tile caches (server/points/scanIndexes.ts). */
export interface ScanIndexes {
  nearest(scanId: string, x: number, y: number, z: number, k: number, maxDistance?: number): Promise<{ x: number; y: number; z: number; distance: number }[]>
  /** `keep`: only points it holds for count (a placement's scene cuts, in the scan's frame). */
  snap(scanId: string, x: number, y: number, z: number, keep?: PointFilter): Promise<SnappedPoint | null>
  /** `maxPoints`: stop reading after maxPoints + 1 points (the caller's cap; see scanIndexes.ts). */
  slab(scanId: string, origin: readonly number[], normal: readonly number[], half: number, maxPoints?: number, keep?: PointFilter): Promise<Float64Array>
  allPoints(scanId: string, maxPoints?: number, keep?: PointFilter): Promise<Float64Array>
  clearCaches(): Promise<void>
  forget(scanId: string): void
  /** The tile cache all scans share: bytes held, its budget (`limits.nearestCacheBytes`), tiles held. */
  readonly cacheUse: { bytes: number; maxBytes: number; tiles: number }
}

/** What the REST side tells the live documents (a no-op until the collab server is attached). */
export interface LiveSync {
  markerChanged(sceneId: string, markerId: string): Promise<void>
  markerRemoved(sceneId: string, markerId: string): Promise<void>
  instanceChanged(sceneId: string, instanceId: string): Promise<void>
  instanceRemoved(sceneId: string, instanceId: string): Promise<void>
  /** An object or a trim written through the API (services/objects.ts): its work-document entry follows. */
  objectChanged(sceneId: string, objectId: string): Promise<void>
  /** The object's entry goes, and its trims' (`trimIds`: they went with it in PostgreSQL). */
  objectRemoved(sceneId: string, objectId: string, trimIds: readonly string[]): Promise<void>
  trimChanged(sceneId: string, trimId: string): Promise<void>
  trimRemoved(sceneId: string, trimId: string): Promise<void>
  /** Writes the marker's record-document entry (its check, review and comments summary) from PostgreSQL. */
  checkStored(sceneId: string, markerId: string): Promise<void>
  /** A viewing pass was revoked or its guest left: its open sockets close at once (CLOSE_CODES.forbidden). */
  passEnded(passId: string): void
  /**
   * Roles bind open sockets: each of these ends the connections it concerns at once (nothing they send is
   * applied after the call) and closes them with a named code (CLOSE_CODES). A member's new role (null:
   * removed or left) closes theirs with roleChanged (accessEnded).
   */
  membershipChanged(projectId: string, userId: string, role: string | null): void
  /** A session ended (signed out): its sockets close with signedOut. */
  sessionEnded(sessionId: string): void
  /** Every session of an account ended (a new password, a reset): its sockets close with signedOut. */
  userSignedOut(userId: string, reason: string): void
  /** The project was deleted: every socket on its scenes closes with accessEnded. */
  projectDeleted(projectId: string): void
  /** The scene was deleted: every socket on its documents closes with accessEnded. */
  sceneDeleted(sceneId: string): void
}

export interface SnappedPoint {
  x: number
  y: number
  z: number
  distance: number
  /** Per-point standard uncertainty, metres (station logs), else null. */
  uncertainty: number | null
}
