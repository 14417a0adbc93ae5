import { ipKeyGenerator, rateLimit } from 'express-rate-limit'
import type { Request, RequestHandler } from 'express'
import { ErrorCode } from '@shared/schemas/common'
import type { Config } from '../config'
import { hashSecret } from '../auth/tokens'
import type { LimiterName } from '../routes/registry'
import type { Db } from '../db'
import { PostgresRateLimitStore } from './rateLimitStore'

const WHAT: Record<LimiterName, string> = {
  signIn: 'sign-in attempts',
  passwordReset: 'password reset requests',
  signUp: 'sign-ups',
  invite: 'invitations and viewing passes',
  tokenUse: 'invitation and pass links',
  upload: 'uploads',
}

/** Per person: the signed-in account, or the rig key (by its hash) that stands in for one. */
function personKey(req: Request): string {
  if (req.user) return `user:${req.user.id}`
  const bearer = /^Bearer\s+(\S+)$/i.exec(req.headers.authorization ?? '')
  if (bearer) return `rig:${hashSecret(bearer[1]!)}`
  return ipKeyGenerator(req.ip ?? '')
}

export function createLimiters(limits: Config['rateLimits'], db: Db | null = null): Record<LimiterName, RequestHandler> {
  const make = (name: LimiterName): RequestHandler =>
    rateLimit({
      // Counted in PostgreSQL when there is one, so every server process shares the count.
      ...(db ? { store: new PostgresRateLimitStore(db, name) } : {}),
      windowMs: limits[name].windowMs,
      limit: limits[name].limit,
      standardHeaders: 'draft-8',
      legacyHeaders: false,
      // Sign-in counts failed attempts only (password guessing), so a team signing in from one address is not locked out.
      skipSuccessfulRequests: name === 'signIn',
      // Invitations count per person (the session runs before the limiter), so one owner cannot flood inboxes from many addresses.
      // Uploads count per person too (a rig key counts as its own person).
      ...(name === 'invite' || name === 'upload' ? { keyGenerator: personKey } : {}),
      handler: (_req, res, _next, options) => {
        const minutes = Math.ceil(options.windowMs / 60_000)
        const from = name === 'invite' || name === 'upload' ? 'from you' : 'from this address'
        const limit = name === 'upload' ? ` (at most ${limits[name].limit} in ${minutes} minutes per person or rig key)` : ''
        res.status(429).json({
          error: { code: ErrorCode.tooManyRequests, message: `Too many ${WHAT[name]} ${from}${limit}. Try again in ${minutes} minutes.` },
        })
      },
    })
  return { signIn: make('signIn'), passwordReset: make('passwordReset'), signUp: make('signUp'), invite: make('invite'), tokenUse: make('tokenUse'), upload: make('upload') }
}
