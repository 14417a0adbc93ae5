import type { RequestHandler } from 'express'
import { blankGuestCookie, GUEST_COOKIE, readCookie } from '../auth/guestSessions'
import { hashSecret } from '../auth/tokens'
import { findPassBySession, touchPass } from '../repositories/passes'
import type { Services } from '../types'

/**
 * Reads the viewing pass's guest session cookie: a live pass sets `req.guest`; a cookie whose pass was
 * revoked, has expired or is unknown is cleared, so the browser stops sending it.
 */
export function guestMiddleware(services: Services): RequestHandler {
  return async (req, res, next) => {
    req.guest = null
    const value = readCookie(req.headers.cookie, GUEST_COOKIE)
    if (!value) return next()
    const sessionHash = hashSecret(value)
    const row = await findPassBySession(services.db, sessionHash)
    if (!row) {
      res.appendHeader('Set-Cookie', blankGuestCookie(services.config.secureCookies))
      return next()
    }
    req.guest = { passId: row.id, projectId: row.project_id, projectName: row.project_name, name: row.name, email: row.email, expiresAt: row.expires_at, allowDownload: row.allow_download, sessionHash }
    void touchPass(services.db, row.id).catch((err) => services.log.warn({ err }, 'viewing pass last-used time not stored'))
    next()
  }
}
