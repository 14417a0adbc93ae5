import crypto from 'node:crypto'
import type { Response } from 'express'
import type { ChangePasswordBody, ResetConfirmBody, SignInBody, SignUpAccepted, SignUpBody, User } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { hashSecret, newSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import type { Conn } from '../db'
import { confirmEmailMail, passwordChangedMail, passwordResetMail, signUpAttemptMail } from '../mail/templates'
import {
  clearSignInFailures,
  consumeEmailConfirmation,
  findEmailConfirmation,
  findSignInFailures,
  insertEmailConfirmation,
  markEmailConfirmed,
  recordSignInFailure,
  voidEmailConfirmations,
} from '../repositories/emailConfirmations'
import { consumePasswordReset, findPasswordReset, insertPasswordReset, voidPasswordResets } from '../repositories/passwordResets'
import { findUserByEmail, findUserById, updatePasswordHash, updateUserName } from '../repositories/users'
import type { Services } from '../types'
import { toUser } from './mappers'

async function startSession(s: Services, res: Response, userId: string): Promise<void> {
  const session = await s.auth.createSession(userId, {})
  res.appendHeader('Set-Cookie', s.auth.createSessionCookie(session.id).serialize())
}

/** Writes a fresh confirmation link for `userId` (voiding earlier ones) and queues its mail, in `conn`. */
async function sendConfirmation(s: Services, conn: Conn, user: { id: string; email: string; name: string }): Promise<void> {
  const token = newSecret()
  const ttl = s.config.emailConfirmTtlMs
  await voidEmailConfirmations(conn, user.id)
  await insertEmailConfirmation(conn, user.id, hashSecret(token), new Date(Date.now() + ttl))
  // The token rides in the fragment, which browsers never send to the server, so no log can catch it.
  const link = `${s.publicOrigin()}/confirm-email#token=${token}`
  await s.mailer.enqueue(conn, confirmEmailMail(user.email, user.name, link, Math.round(ttl / 3_600_000)))
}

/**
 * Answers the same whether or not the address is taken: no session, the same body, a password hashed
 * either way (so the time matches). A new account gets a confirmation link; the owner of a taken address
 * gets a note that someone tried, with where to sign in or reset the password.
 */
export async function signUp(s: Services, body: SignUpBody): Promise<SignUpAccepted> {
  const passwordHash = await s.hasher.hash(body.password)
  await s.db.transaction().execute(async (tx) => {
    const existing = await findUserByEmail(tx, body.email)
    if (existing) {
      const origin = s.publicOrigin()
      await s.mailer.enqueue(tx, signUpAttemptMail(existing.email, existing.name, `${origin}/sign-in`, `${origin}/forgot-password`))
      return
    }
    // Two sign-ups for one address at once: the second finds the first's row on the unique index and
    // takes the taken-address path, so both still answer alike.
    const row = await tx
      .insertInto('users')
      .values({ email: body.email, name: body.name, password_hash: passwordHash })
      .onConflict((oc) => oc.column('email').doNothing())
      .returningAll()
      .executeTakeFirst()
    if (row) await sendConfirmation(s, tx, row)
  })
  return { email: body.email, next: 'check-inbox' }
}

/** Confirms the address of the link's account and signs that account in on this browser. */
export async function confirmEmail(s: Services, res: Response, token: string): Promise<User> {
  const tokenHash = hashSecret(token)
  const user = await s.db.transaction().execute(async (tx) => {
    const used = await consumeEmailConfirmation(tx, tokenHash)
    if (!used) return null
    await markEmailConfirmed(tx, used.user_id)
    await voidEmailConfirmations(tx, used.user_id)
    return findUserById(tx, used.user_id)
  })
  if (!user) {
    const known = await findEmailConfirmation(s.db, tokenHash)
    const why = !known ? 'This confirmation link is not known.' : known.used_at ? 'This confirmation link has been used already.' : 'This confirmation link has expired.'
    throw new HttpError(400, ErrorCode.invalidToken, `${why} Sign in and ask for a new one.`, 'token')
  }
  await startSession(s, res, user.id)
  return toUser(user)
}

/** A new confirmation link for the signed-in, still unconfirmed account. */
export async function resendConfirmation(s: Services, userId: string): Promise<void> {
  await s.db.transaction().execute(async (tx) => {
    const row = await findUserById(tx, userId)
    if (!row) throw HttpError.unauthenticated()
    if (row.email_confirmed_at) throw HttpError.conflict(`${row.email} is confirmed already.`)
    await sendConfirmation(s, tx, row)
  })
}

// Verifying against a real hash when the e-mail is unknown keeps the answer time the same either way.
let decoyHash: Promise<string> | null = null

/** How long `email` must still wait before its next try, in ms (0: it may try now). */
function signInWait(s: Services, failures: { failures: number; last_failed_at: Date } | undefined): number {
  const { free, baseMs, capMs } = s.config.signInDelay
  if (!failures || failures.failures < free) return 0
  const delay = Math.min(capMs, baseMs * 2 ** (failures.failures - free))
  return Math.max(0, failures.last_failed_at.getTime() + delay - Date.now())
}

/**
 * Failed tries are counted per address typed, known or not (so the delay tells nothing about accounts).
 * After `signInDelay.free` failures a try too soon answers 429 with Retry-After, before the password is
 * looked at; a right password once the wait is over signs in and clears the count.
 */
export async function signIn(s: Services, res: Response, body: SignInBody): Promise<User> {
  const wait = signInWait(s, await findSignInFailures(s.db, body.email))
  if (wait > 0) {
    const seconds = Math.ceil(wait / 1000)
    res.setHeader('Retry-After', String(seconds))
    throw new HttpError(429, ErrorCode.tooManyRequests, `Too many wrong passwords for this address. Try again in ${seconds} s; the wait grows with each wrong try (reset the password if you forgot it).`)
  }
  const row = await findUserByEmail(s.db, body.email)
  decoyHash ??= s.hasher.hash(crypto.randomBytes(16).toString('hex'))
  const ok = await s.hasher.verify(row?.password_hash ?? (await decoyHash), body.password)
  if (!row || !ok) {
    await recordSignInFailure(s.db, body.email)
    throw new HttpError(401, ErrorCode.invalidCredentials, 'That e-mail and password do not match an account.')
  }
  await clearSignInFailures(s.db, body.email)
  await startSession(s, res, row.id)
  return toUser(row)
}

export async function signOut(s: Services, res: Response, sessionId: string | undefined): Promise<void> {
  if (sessionId) {
    await s.auth.invalidateSession(sessionId)
    s.live.sessionEnded(sessionId)
  }
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
  s.live.userSignedOut(userId, 'your password was changed')
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
    // The reset link was e-mailed to the address: following it proves the address as well.
    await markEmailConfirmed(tx, used.user_id)
    return findUserById(tx, used.user_id)
  })
  if (!user) {
    const known = await findPasswordReset(s.db, tokenHash)
    const why = !known ? 'This reset link is not known.' : known.used_at ? 'This reset link has been used already.' : 'This reset link has expired.'
    throw new HttpError(400, ErrorCode.invalidToken, `${why} Ask for a new one.`, 'token')
  }
  await s.auth.invalidateUserSessions(user.id)
  s.live.userSignedOut(user.id, 'your password was reset')
  await startSession(s, res, user.id)
  return toUser(user)
}
