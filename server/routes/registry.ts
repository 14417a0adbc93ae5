import type { Request, Response } from 'express'
import type { z } from 'zod'
import type { Right, Role } from '@shared/auth/roles'
import type { AuthUser, Guest, Services } from '../types'

/**
 * Who may call a route. Project routes name the right they need (shared/auth/roles.ts); the project is
 * found from the path (see services/access.ts), and the codes follow DEVELOPERS.md, "Roles and rights": no session 401,
 * not a member 404, a member whose role lacks the right 403.
 */
export type Access =
  | { kind: 'public' }
  /** A signed-in person; a guest holding only a viewing pass gets 403 (a pass changes nothing and has no account). */
  | { kind: 'user' }
  /** `rigKey`: a per-project upload token (`Authorization: Bearer ...`) may stand in for a session. */
  | { kind: 'project'; right: Right; rigKey?: boolean }
  /** Development-only tools (the dev mailbox); not mounted in production. */
  | { kind: 'dev' }

export interface Membership {
  projectId: string
  role: Role
}

export interface RigKey {
  id: string
  createdBy: string | null
}

export interface RouteContext<P, B, Q> {
  params: P
  body: B
  query: Q
  user: AuthUser | null
  /** A guest holding a viewing pass (no account); on project routes only for that pass's project. */
  guest: Guest | null
  /** Set when an upload token, not a session, authorised the request. */
  rigKey: RigKey | null
  membership: Membership | null
  /** The uploaded file of a route with `upload`, spooled to disk; removed after the handler. */
  file: Express.Multer.File | null
  services: Services
  req: Request
  res: Response
}

export interface Reply {
  status?: number
  body?: unknown
}

export type LimiterName = 'signIn' | 'passwordReset' | 'signUp' | 'invite' | 'tokenUse' | 'upload'

export interface RouteDef<P = any, B = any, Q = any> {
  method: 'get' | 'post' | 'patch' | 'put' | 'delete'
  /** Below /api, in Express 5 path syntax. */
  path: string
  access: Access
  params?: z.ZodType<P>
  body?: z.ZodType<B>
  query?: z.ZodType<Q>
  limiter?: LimiterName
  /** Takes one multipart file in this field (streamed to the spool folder). */
  upload?: { field: string }
  handler(ctx: RouteContext<P, B, Q>): Promise<Reply | void> | Reply | void
}

/** Declares a route; the identity function exists so each handler's context is typed from its schemas. */
export function defineRoute<P = Record<string, never>, B = undefined, Q = undefined>(def: RouteDef<P, B, Q>): RouteDef<P, B, Q> {
  return def
}

/**
 * The actor of a project route's write (services/markerWrites.ts): the account and the role the mount
 * checked a moment ago (a rig key acts as a measurer).
 */
export function actorOf(user: AuthUser | null, membership: Membership | null): { userId: string | null; role: Role } {
  if (!membership) throw new Error('actorOf: a project route only')
  return { userId: user?.id ?? null, role: membership.role }
}
