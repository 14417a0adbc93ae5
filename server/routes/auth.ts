import { ChangePasswordBody, ConfirmEmailBody, ResetConfirmBody, ResetRequestBody, SignInBody, SignUpBody, UpdateMeBody } from '@shared/schemas'
import { GUEST_COOKIE } from '../auth/guestSessions'
import * as accounts from '../services/accounts'
import { toUser } from '../services/mappers'
import { guestSessionOf, leavePass } from '../services/passes'
import { defineRoute, type RouteDef } from './registry'

export const authRoutes: RouteDef[] = [
  defineRoute({
    method: 'post',
    path: '/auth/sign-up',
    access: { kind: 'public' },
    limiter: 'signUp',
    body: SignUpBody,
    // 202 and no session whether or not the address had an account: the next step is in the mailbox.
    handler: async ({ services, body }) => ({ status: 202, body: await accounts.signUp(services, body) }),
  }),
  defineRoute({
    method: 'post',
    path: '/auth/confirm-email',
    access: { kind: 'public' },
    limiter: 'tokenUse',
    body: ConfirmEmailBody,
    handler: async ({ services, res, body }) => ({ body: { user: await accounts.confirmEmail(services, res, body.token) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/me/confirm-email/resend',
    access: { kind: 'user' },
    limiter: 'signUp',
    handler: async ({ services, user }) => {
      await accounts.resendConfirmation(services, user!.id)
      return { status: 202, body: { ok: true } }
    },
  }),
  defineRoute({
    method: 'post',
    path: '/auth/sign-in',
    access: { kind: 'public' },
    limiter: 'signIn',
    body: SignInBody,
    handler: async ({ services, res, body }) => ({ body: { user: await accounts.signIn(services, res, body) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/auth/sign-out',
    access: { kind: 'public' },
    // Ends a viewing pass's guest session as well: signing out leaves this browser with nothing.
    handler: async ({ services, res, req, guest }) => {
      await accounts.signOut(services, res, req.authSession?.id)
      if (guest || req.headers.cookie?.includes(`${GUEST_COOKIE}=`)) await leavePass(services, res, guest)
    },
  }),
  defineRoute({
    method: 'post',
    path: '/auth/password-reset',
    access: { kind: 'public' },
    limiter: 'passwordReset',
    body: ResetRequestBody,
    handler: async ({ services, body }) => {
      await accounts.requestPasswordReset(services, body.email)
      return { status: 202, body: { ok: true } }
    },
  }),
  defineRoute({
    method: 'post',
    path: '/auth/password-reset/confirm',
    access: { kind: 'public' },
    limiter: 'passwordReset',
    body: ResetConfirmBody,
    handler: async ({ services, res, body }) => ({ body: { user: await accounts.confirmPasswordReset(services, res, body) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/session',
    access: { kind: 'public' },
    handler: ({ user, guest }) => ({ body: { user: user ? toUser(user) : null, guest: guest ? guestSessionOf(guest) : null } }),
  }),
  defineRoute({
    method: 'get',
    path: '/me',
    access: { kind: 'user' },
    handler: ({ user }) => ({ body: { user: toUser(user!) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/me',
    access: { kind: 'user' },
    body: UpdateMeBody,
    handler: async ({ services, user, body }) => ({ body: { user: await accounts.rename(services, user!.id, body.name) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/me/password',
    access: { kind: 'user' },
    limiter: 'signIn',
    body: ChangePasswordBody,
    handler: async ({ services, res, user, body }) => {
      await accounts.changePassword(services, res, user!.id, body)
    },
  }),
]
