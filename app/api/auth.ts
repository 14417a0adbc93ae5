import { MeResponse, SignUpAccepted, type ResetConfirmBody, type ResetRequestBody, type SignInBody, type SignUpBody, type User } from '@shared/schemas'
import { http } from './http'

/** Always 202 and no session, whether or not the address had an account: the next step is in the mailbox. */
export function signUp(body: SignUpBody): Promise<SignUpAccepted> {
  return http.post('/api/auth/sign-up', body, SignUpAccepted)
}

/** Confirms the address of the e-mailed link's account and signs it in (the answer carries the session cookie). */
export async function confirmEmail(token: string): Promise<User> {
  return (await http.post('/api/auth/confirm-email', { token }, MeResponse)).user
}

/** A new confirmation link for the signed-in, unconfirmed account. */
export function resendConfirmation(): Promise<void> {
  return http.postNoContent('/api/me/confirm-email/resend')
}

export async function signIn(body: SignInBody): Promise<User> {
  return (await http.post('/api/auth/sign-in', body, MeResponse)).user
}

export function signOut(): Promise<void> {
  return http.postNoContent('/api/auth/sign-out')
}

/** Always 202, whether or not an account uses the address. */
export function requestPasswordReset(body: ResetRequestBody): Promise<void> {
  return http.postNoContent('/api/auth/password-reset', body)
}

/** Sets the new password and signs in (the answer carries the session cookie). */
export async function confirmPasswordReset(body: ResetConfirmBody): Promise<User> {
  return (await http.post('/api/auth/password-reset/confirm', body, MeResponse)).user
}
