import { ipKeyGenerator, rateLimit } from 'express-rate-limit'
import type { RequestHandler } from 'express'
import { ErrorCode } from '@shared/schemas/common'
import type { Config } from '../config'
import type { LimiterName } from '../routes/registry'

const WHAT: Record<LimiterName, string> = {
  signIn: 'sign-in attempts',
  passwordReset: 'password reset requests',
  signUp: 'sign-ups',
  invite: 'invitations and viewing passes',
  tokenUse: 'invitation and pass links',
}

export function createLimiters(limits: Config['rateLimits']): Record<LimiterName, RequestHandler> {
  const make = (name: LimiterName): RequestHandler =>
    rateLimit({
      windowMs: limits[name].windowMs,
      limit: limits[name].limit,
      standardHeaders: 'draft-8',
      legacyHeaders: false,
      // Sign-in counts failed attempts only (password guessing), so a team signing in from one address is not locked out.
      skipSuccessfulRequests: name === 'signIn',
      // Invitations count per person (the session runs before the limiter), so one owner cannot flood inboxes from many addresses.
      ...(name === 'invite' ? { keyGenerator: (req) => (req.user ? `user:${req.user.id}` : ipKeyGenerator(req.ip ?? '')) } : {}),
      handler: (_req, res, _next, options) => {
        const minutes = Math.ceil(options.windowMs / 60_000)
        const from = name === 'invite' ? 'from you' : 'from this address'
        res.status(429).json({
          error: { code: ErrorCode.tooManyRequests, message: `Too many ${WHAT[name]} ${from}. Try again in ${minutes} minutes.` },
        })
      },
    })
  return { signIn: make('signIn'), passwordReset: make('passwordReset'), signUp: make('signUp'), invite: make('invite'), tokenUse: make('tokenUse') }
}
