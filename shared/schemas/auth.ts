import { z } from 'zod'
import { Email, Id, Password, PersonName, Timestamp } from './common'
import { GuestSession } from './passes'

export const SignUpBody = z.object({ email: Email, password: Password, name: PersonName })
export type SignUpBody = z.infer<typeof SignUpBody>

export const SignInBody = z.object({
  email: Email,
  // Sign-in does not re-apply the length floor: an old password must still get a clear "wrong password".
  password: z.string({ error: 'must be text' }).min(1, { error: 'must not be empty' }).max(200, { error: 'must be at most 200 characters' }),
})
export type SignInBody = z.infer<typeof SignInBody>

export const UpdateMeBody = z.object({ name: PersonName })
export type UpdateMeBody = z.infer<typeof UpdateMeBody>

export const ChangePasswordBody = z.object({
  currentPassword: z.string({ error: 'must be text' }).min(1, { error: 'must not be empty' }).max(200),
  newPassword: Password,
})
export type ChangePasswordBody = z.infer<typeof ChangePasswordBody>

export const ResetRequestBody = z.object({ email: Email })
export type ResetRequestBody = z.infer<typeof ResetRequestBody>

export const ResetConfirmBody = z.object({
  token: z.string({ error: 'must be text' }).regex(/^[A-Za-z0-9_-]{20,100}$/, { error: 'is not a reset token' }),
  password: Password,
})
export type ResetConfirmBody = z.infer<typeof ResetConfirmBody>

/** The one-time token of an address confirmation link (from the link's `#token=` fragment). */
export const ConfirmEmailBody = z.object({
  token: z.string({ error: 'must be text' }).regex(/^[A-Za-z0-9_-]{20,100}$/, { error: 'is not a confirmation token' }),
})
export type ConfirmEmailBody = z.infer<typeof ConfirmEmailBody>

/**
 * What sign-up answers, the same whether or not the address had an account (202, no session): the next step
 * is in the mailbox, a confirmation link for a new account or a note for the owner of a taken address.
 */
export const SignUpAccepted = z.object({ email: z.string(), next: z.literal('check-inbox') })
export type SignUpAccepted = z.infer<typeof SignUpAccepted>

export const User = z.object({
  id: Id,
  email: z.string(),
  name: z.string(),
  createdAt: Timestamp,
  /** Whether the address has been proven by its e-mailed link; an unconfirmed account cannot accept invitations. */
  emailConfirmed: z.boolean(),
})
export type User = z.infer<typeof User>

export const MeResponse = z.object({ user: User })
export type MeResponse = z.infer<typeof MeResponse>

/**
 * Who is calling (GET /api/session): a signed-in person, a guest holding a viewing pass, both (a member who
 * opened a pass to another project), or neither. Always 200, so a page can ask it before anything else.
 */
export const SessionInfo = z.object({ user: User.nullable(), guest: GuestSession.nullable() })
export type SessionInfo = z.infer<typeof SessionInfo>
