import { MeResponse, type ResetConfirmBody, type ResetRequestBody, type SignInBody, type SignUpBody, type User } from '@shared/schemas'
import { http } from './http'

export async function signUp(body: SignUpBody): Promise<User> {
  return (await http.post('/api/auth/sign-up', body, MeResponse)).user
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
