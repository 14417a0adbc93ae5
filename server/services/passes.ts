import type { Response } from 'express'
import type { GuestSession, Pass, PassCreateBody } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { blankGuestCookie, guestCookie } from '../auth/guestSessions'
import { hashSecret, newSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import { passMail } from '../mail/templates'
import { endPassSession, findPass, findPassBySession, findPassByToken, insertPass, listPasses as listPassRows, openPass as openPassRow, revokePass as revokePassRow } from '../repositories/passes'
import { findUserById } from '../repositories/users'
import type { Guest, Services } from '../types'
import { toGuestSession, toPass } from './mappers'

const DAY_MS = 24 * 60 * 60_000

/** The token rides in the fragment, which browsers never send to a server, so no request log can hold it. */
function passLink(s: Services, token: string): string {
  return `${s.publicOrigin()}/passes/open#token=${token}`
}

export async function listPasses(s: Services, projectId: string): Promise<Pass[]> {
  return (await listPassRows(s.db, projectId)).map(toPass)
}

/** Issues a viewing pass and e-mails its one-time link (the outbox, in the same transaction). */
export async function createPass(s: Services, projectId: string, creatorId: string, body: PassCreateBody): Promise<Pass> {
  const id = await s.db.transaction().execute(async (tx) => {
    const token = newSecret()
    const { id } = await insertPass(tx, { projectId, email: body.email, name: body.name, allowDownload: body.allowDownload, tokenHash: hashSecret(token), createdBy: creatorId, expiresAt: new Date(Date.now() + body.days * DAY_MS) })
    const row = (await findPass(tx, id))!
    const sender = (await findUserById(tx, creatorId))?.name ?? 'An owner'
    await s.mailer.enqueue(tx, passMail(row.email, { name: row.name, sender, projectName: row.project_name, link: passLink(s, token), expiresAt: row.expires_at }))
    return id
  })
  return toPass((await findPass(s.db, id))!)
}

/** Revoked at once: the guest's next request is refused, and its open live sockets close. */
export async function revokePass(s: Services, passId: string): Promise<void> {
  await revokePassRow(s.db, passId)
  s.live.passEnded(passId)
}

/**
 * Swaps the one-time token for a guest session cookie. The same browser opening its link again (a reload)
 * keeps the session it has; any other second use is refused.
 */
export async function openPass(s: Services, res: Response, token: string, current: Guest | null): Promise<GuestSession> {
  const tokenHash = hashSecret(token)
  const secret = newSecret()
  const opened = await openPassRow(s.db, tokenHash, hashSecret(secret))
  if (opened) {
    const row = (await findPassBySession(s.db, hashSecret(secret)))!
    res.appendHeader('Set-Cookie', guestCookie(secret, row.expires_at, s.config.secureCookies))
    return toGuestSession(row)
  }
  const row = await findPassByToken(s.db, tokenHash)
  if (row && current?.passId === row.id) {
    const live = await findPassBySession(s.db, current.sessionHash)
    if (live) return toGuestSession(live)
  }
  const why = !row
    ? 'This viewing pass link is not valid.'
    : row.revoked_at
      ? 'This viewing pass was withdrawn by the project’s owner.'
      : row.expires_at <= new Date()
        ? 'This viewing pass has expired. Ask the project’s owner for a new one.'
        : 'This viewing pass was opened already, in another browser. Each pass opens once; ask the project’s owner for a new one.'
  throw new HttpError(400, ErrorCode.invalidToken, why, 'token')
}

/** Ends a guest's session (sign-out): the cookie goes and the pass's open sockets close. */
export async function leavePass(s: Services, res: Response, guest: Guest | null): Promise<void> {
  if (guest) {
    await endPassSession(s.db, guest.sessionHash)
    s.live.passEnded(guest.passId)
  }
  res.appendHeader('Set-Cookie', blankGuestCookie(s.config.secureCookies))
}

export function guestSessionOf(guest: Guest): GuestSession {
  return { passId: guest.passId, projectId: guest.projectId, projectName: guest.projectName, name: guest.name, expiresAt: guest.expiresAt.toISOString(), allowDownload: guest.allowDownload }
}
