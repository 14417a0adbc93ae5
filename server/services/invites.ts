import type { Invite, InviteAccepted, InviteCreateBody, InviteLookup } from '@shared/schemas'
import { INVITE_TTL_DAYS } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { hashSecret, newSecret } from '../auth/tokens'
import type { Conn } from '../db'
import type { InviteRow } from '../db/schema'
import { HttpError } from '../errors'
import { inviteMail } from '../mail/templates'
import {
  findInvite,
  findInviteByToken,
  findPendingInviteFor,
  insertInvite,
  listPendingInvites,
  lockInviteByToken,
  markInviteAccepted,
  renewInvite,
  revokeInvite as revokeInviteRow,
} from '../repositories/invites'
import { findMembership, insertMembership } from '../repositories/memberships'
import { lockProject } from '../repositories/projects'
import { findUserByEmail, findUserById } from '../repositories/users'
import type { AuthUser, Services } from '../types'
import { toInvite } from './mappers'

const TTL_MS = INVITE_TTL_DAYS * 24 * 60 * 60_000

/** The token rides in the fragment, which browsers never send to a server, so no request log can hold it. */
function acceptLink(s: Services, token: string): string {
  return `${s.publicOrigin()}/invites/accept#token=${token}`
}

async function sendInviteMail(s: Services, conn: Conn, inviteId: string, token: string): Promise<void> {
  const row = (await findInvite(conn, inviteId))!
  const link = acceptLink(s, token)
  await s.mailer.enqueue(conn, inviteMail(row.email, { inviter: row.inviter_name ?? 'An owner', projectName: row.project_name, role: row.role, link, expiresAt: row.expires_at }))
}

export async function listInvites(s: Services, projectId: string): Promise<Invite[]> {
  return (await listPendingInvites(s.db, projectId)).map(toInvite)
}

/**
 * Invites one address with a role. Serialised per project (a row lock), so two owners inviting the same
 * address at once make one invitation. The mail is written in the same transaction (the outbox).
 */
export async function createInvite(s: Services, projectId: string, inviterId: string, body: InviteCreateBody): Promise<Invite> {
  const id = await s.db.transaction().execute(async (tx) => {
    await lockProject(tx, projectId)
    const account = await findUserByEmail(tx, body.email)
    if (account && (await findMembership(tx, projectId, account.id))) {
      throw HttpError.conflict(`${account.name} (${body.email}) is already a member of this project.`, 'email')
    }
    const pending = await findPendingInviteFor(tx, projectId, body.email)
    if (pending && pending.expires_at > new Date()) {
      throw HttpError.conflict(`An invitation to ${body.email} is already waiting (sent ${pending.last_sent_at.toISOString().slice(0, 10)}). Send it again, or withdraw it first.`, 'email')
    }
    // An expired invitation gives way to the new one.
    if (pending) await revokeInviteRow(tx, pending.id)
    const token = newSecret()
    const { id } = await insertInvite(tx, { projectId, email: body.email, role: body.role, tokenHash: hashSecret(token), invitedBy: inviterId, expiresAt: new Date(Date.now() + TTL_MS) })
    await sendInviteMail(s, tx, id, token)
    return id
  })
  return toInvite((await findInvite(s.db, id))!)
}

/** A new link, valid for another week; the old link stops working at once. */
export async function resendInvite(s: Services, inviteId: string): Promise<Invite> {
  await s.db.transaction().execute(async (tx) => {
    const row = (await findInvite(tx, inviteId))!
    if (row.accepted_at) throw HttpError.conflict('This invitation was accepted already: the person is a member.')
    if (row.revoked_at) throw HttpError.conflict('This invitation was withdrawn. Invite the address again instead.')
    const token = newSecret()
    await renewInvite(tx, inviteId, hashSecret(token), new Date(Date.now() + TTL_MS))
    await sendInviteMail(s, tx, inviteId, token)
  })
  return toInvite((await findInvite(s.db, inviteId))!)
}

export async function revokeInvite(s: Services, inviteId: string): Promise<void> {
  const row = (await findInvite(s.db, inviteId))!
  if (row.accepted_at) throw HttpError.conflict('This invitation was accepted already: remove the member instead.')
  await revokeInviteRow(s.db, inviteId)
}

/** Why a token cannot be used, as the invited person reads it; null when it can. */
function refusal(row: Pick<InviteRow, 'accepted_at' | 'revoked_at' | 'expires_at'> | undefined): string | null {
  if (!row) return 'This invitation link is not valid: a newer invitation may have been sent in its place. Use the newest e-mail, or ask the project’s owner to send it again.'
  if (row.accepted_at) return 'This invitation has been used already.'
  if (row.expires_at <= new Date()) return 'This invitation has expired. Ask the project’s owner to send it again.'
  if (row.revoked_at) return 'This invitation was withdrawn by the project’s owner.'
  return null
}

function refuse(message: string): HttpError {
  return new HttpError(400, ErrorCode.invalidToken, message, 'token')
}

export async function lookupInvite(s: Services, token: string): Promise<InviteLookup> {
  const row = await findInviteByToken(s.db, hashSecret(token))
  const why = refusal(row)
  if (why) throw refuse(why)
  const invite = row!
  return {
    invite: { email: invite.email, role: invite.role, projectName: invite.project_name, invitedBy: invite.inviter_name, expiresAt: invite.expires_at.toISOString() },
    accountExists: (await findUserByEmail(s.db, invite.email)) !== undefined,
  }
}

/** Joins the signed-in person to the project, if the invitation is live and addressed to their e-mail. */
export async function acceptInvite(s: Services, user: AuthUser, token: string): Promise<InviteAccepted> {
  return s.db.transaction().execute(async (tx) => {
    const row = await lockInviteByToken(tx, hashSecret(token))
    // Accepting twice (a reload, a second tab) is the same join.
    if (row?.accepted_at && row.accepted_by === user.id) return { projectId: row.project_id, role: row.role }
    const why = refusal(row)
    if (why) throw refuse(why)
    const invite = row!
    const account = await findUserById(tx, user.id)
    if (!account || account.email !== invite.email) {
      throw new HttpError(
        403,
        ErrorCode.wrongAccount,
        `This invitation is for ${invite.email}, and you are signed in as ${account?.email ?? 'someone else'}. Sign out, then sign in or create an account with ${invite.email}; or ask the owner to invite ${account?.email ?? 'your address'}.`,
      )
    }
    if (!account.email_confirmed_at) {
      throw new HttpError(
        403,
        ErrorCode.emailUnconfirmed,
        `Confirm your address ${account.email} before joining: open the confirmation link we e-mailed you, or ask for a new one (POST /api/me/confirm-email/resend, or "Send the link again" on this page).`,
      )
    }
    // Someone already a member keeps the role they have.
    await insertMembership(tx, invite.project_id, user.id, invite.role)
    await markInviteAccepted(tx, invite.id, user.id)
    const membership = (await findMembership(tx, invite.project_id, user.id))!
    return { projectId: invite.project_id, role: membership.role }
  })
}
