import type { RequestHandler } from 'express'
import { ErrorCode } from '@shared/schemas/common'
import { GUEST_COOKIE } from '../auth/guestSessions'
import { SESSION_COOKIE } from '../auth/lucia'
import { HttpError } from '../errors'

const SAFE = new Set(['GET', 'HEAD', 'OPTIONS'])

/**
 * Cross-site request forgery guard for state-changing requests. A browser always sends Origin on such
 * requests; it must name this server. A request without Origin is accepted only when it carries no
 * session or guest cookie (a rig posting with a bearer token, a script), since then there is nothing to forge.
 */
export function originCheck(allowedOrigins: () => string[]): RequestHandler {
  return (req, _res, next) => {
    if (SAFE.has(req.method)) return next()
    const origin = req.headers.origin
    if (origin) {
      let host: string | null = null
      try {
        host = new URL(origin).host
      } catch {
        host = null
      }
      const allowed = host !== null && (host === req.headers.host || allowedOrigins().some((o) => new URL(o).host === host))
      if (!allowed) return next(new HttpError(403, ErrorCode.badOrigin, `Requests from ${origin} may not change data here.`))
      return next()
    }
    const cookies = req.headers.cookie ?? ''
    if (cookies.includes(`${SESSION_COOKIE}=`) || cookies.includes(`${GUEST_COOKIE}=`)) {
      return next(new HttpError(403, ErrorCode.badOrigin, 'A request that changes data must come from the Spanmark page (it carried no Origin header).'))
    }
    next()
  }
}
