import type { RequestHandler } from 'express'
import type { Auth } from '../auth/lucia'

/** Reads the session cookie, validates it, renews it when lucia says so, and clears a dead one. */
export function sessionMiddleware(auth: Auth): RequestHandler {
  return async (req, res, next) => {
    req.user = null
    req.authSession = null
    const id = auth.readSessionCookie(req.headers.cookie ?? '')
    if (!id) return next()
    const { session, user } = await auth.validateSession(id)
    if (session?.fresh) res.appendHeader('Set-Cookie', auth.createSessionCookie(session.id).serialize())
    if (!session) res.appendHeader('Set-Cookie', auth.createBlankSessionCookie().serialize())
    req.user = user
    req.authSession = session
    next()
  }
}
