import crypto from 'node:crypto'
import type { Response } from 'express'
import type { ChangePasswordBody, ResetConfirmBody, SignInBody, SignUpBody, User } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { hashSecret, newSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import { passwordChangedMail, passwordResetMail } from '../mail/templates'
import { consumePasswordReset, findPasswordReset, insertPasswordReset, voidPasswordResets } from '../repositories/passwordResets'
import { findUserByEmail, findUserById, insertUser, updatePasswordHash, updateUserName } from '../repositories/users'
import type { Services } from '../types'
import { toUser } from './mappers'

function isUniqueViolation(err: unknown): boolean {
  return typeof err === 'object' && err !== null && (err as { code?: string }).code === '23505'
}

async function startSession(s: Services, res: Response, userId: string): Promise<void> {
  const session = await s.auth.createSession(userId, {})
  res.appendHeader('Set-Cookie', s.auth.createSessionCookie(session.id).serialize())
}

export async function signUp(s: Services, res: Response, body: SignUpBody): Promise<User> {
  const taken = () => HttpError.conflict('An account already uses this e-mail address. Sign in, or reset its password.', 'email')
  if (await findUserByEmail(s.db, body.email)) throw taken()
  const passwordHash = await s.hasher.hash(body.password)
  const row = await insertUser(s.db, { email: body.email, name: body.name, password_hash: passwordHash }).catch((err: unknown) => {
    throw isUniqueViolation(err) ? taken() : err
  })
  await startSession(s, res, row.id)
  return toUser(row)
}

// Verifying against a real hash when the e-mail is unknown keeps the answer time the same either way.
let decoyHash: Promise<string> | null = null

export async function signIn(s: Services, res: Response, body: SignInBody): Promise<User> {
  const row = await findUserByEmail(s.db, body.email)
  decoyHash ??= s.hasher.hash(crypto.randomBytes(16).toString('hex'))
  const ok = await s.hasher.verify(row?.password_hash ?? (await decoyHash), body.password)
  if (!row || !ok) throw new HttpError(401, ErrorCode.invalidCredentials, 'That e-mail and password do not match an account.')
  await startSession(s, res, row.id)
  return toUser(row)
}

export async function signOut(s: Services, res: Response, sessionId: string | undefined): Promise<void> {
  if (sessionId) await s.auth.invalidateSession(sessionId)
  res.appendHeader('Set-Cookie', s.auth.createBlankSessionCookie().serialize())
}

export async function rename(s: Services, userId: string, name: string): Promise<User> {
  return toUser(await updateUserName(s.db, userId, name))
}

/** A new password signs out every other session and voids every reset link still out; this one is replaced by a fresh session. */
export async function changePassword(s: Services, res: Response, userId: string, body: ChangePasswordBody): Promise<void> {
  const row = await findUserById(s.db, userId)
  if (!row) throw HttpError.unauthenticated()
  if (!(await s.hasher.verify(row.password_hash, body.currentPassword))) {
    throw new HttpError(400, ErrorCode.invalidCredentials, 'The current password is not right.', 'currentPassword')
  }
  await s.db.transaction().execute(async (tx) => {
    await updatePasswordHash(tx, userId, await s.hasher.hash(body.newPassword))
    // A reset link e-mailed before the change would otherwise still set a password after it.
    await voidPasswordResets(tx, userId)
  })
  await s.auth.invalidateUserSessions(userId)
  await startSession(s, res, userId)
  await s.mailer.enqueue(s.db, passwordChangedMail(row.email, row.name))
}

/** Always answers the same, so the form does not tell who has an account. */
export async function requestPasswordReset(s: Services, email: string): Promise<void> {
  const row = await findUserByEmail(s.db, email)
  if (!row) return
  const token = newSecret()
  const ttl = s.config.passwordResetTtlMs
  await insertPasswordReset(s.db, row.id, hashSecret(token), new Date(Date.now() + ttl))
  // The token rides in the fragment, which browsers never send to the server, so no log can catch it.
  const link = `${s.publicOrigin()}/reset-password#token=${token}`
  await s.mailer.enqueue(s.db, passwordResetMail(row.email, row.name, link, Math.round(ttl / 60_000)))
}

export async function confirmPasswordReset(s: Services, res: Response, body: ResetConfirmBody): Promise<User> {
  const tokenHash = hashSecret(body.token)
  const passwordHash = await s.hasher.hash(body.password)
  const user = await s.db.transaction().execute(async (tx) => {
    const used = await consumePasswordReset(tx, tokenHash)
    if (!used) return null
    await updatePasswordHash(tx, used.user_id, passwordHash)
    await voidPasswordResets(tx, used.user_id)
    return findUserById(tx, used.user_id)
  })
  if (!user) {
    const known = await findPasswordReset(s.db, tokenHash)
    const why = !known ? 'This reset link is not known.' : known.used_at ? 'This reset link has been used already.' : 'This reset link has expired.'
    throw new HttpError(400, ErrorCode.invalidToken, `${why} Ask for a new one.`, 'token')
  }
  await s.auth.invalidateUserSessions(user.id)
  await startSession(s, res, user.id)
  return toUser(user)
}
