import type { RequestHandler } from 'express'
import { ErrorCode } from '@shared/schemas/common'
import { GUEST_COOKIE } from '../auth/guestSessions'
import { SESSION_COOKIE } from '../auth/lucia'
import { HttpError } from '../errors'

const SAFE = new Set(['GET', 'HEAD', 'OPTIONS'])

/** `scheme://host[:port]` as the URL standard serialises an origin (default ports dropped), or null. */
function originOf(value: string): string | null {
  try {
    const origin = new URL(value).origin
    return origin === 'null' ? null : origin
  } catch {
    return null
  }
}

/**
 * Whether an Origin header names this server: scheme and host (with port) must both match, either the
 * request's own (`scheme` as the connection or a trusted proxy says, `Host`) or one of `allowed`.
 * Comparing hosts alone would let a page served over plain http act on the https site (RFC 6454 section 5:
 * two origins are the same only when scheme, host and port all are).
 */
export function originMatches(origin: string, scheme: string, host: string | undefined, allowed: string[]): boolean {
  const given = originOf(origin)
  if (!given) return false
  const own = host ? originOf(`${scheme}://${host}`) : null
  return given === own || allowed.some((o) => originOf(o) === given)
}

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
      // req.protocol: the connection's, or X-Forwarded-Proto from a proxy trusted through TRUST_PROXY.
      if (!originMatches(origin, req.protocol, req.headers.host, allowedOrigins())) return next(new HttpError(403, ErrorCode.badOrigin, `Requests from ${origin} may not change data here.`))
      return next()
    }
    const cookies = req.headers.cookie ?? ''
    if (cookies.includes(`${SESSION_COOKIE}=`) || cookies.includes(`${GUEST_COOKIE}=`)) {
      return next(new HttpError(403, ErrorCode.badOrigin, 'A request that changes data must come from the Spanmark page (it carried no Origin header).'))
    }
    next()
  }
}
