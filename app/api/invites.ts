import { InviteAccepted, InviteList, InviteLookup, InviteResponse, type Invite, type InviteCreateBody } from '@shared/schemas'
import { apiPath, http } from './http'

/** A project's invitations still waiting (expired ones included). Owners only. */
export async function listInvites(projectId: string, signal?: AbortSignal): Promise<Invite[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/invites`, InviteList, { signal })).invites
}

/** 409 (field email) for a member or an address with an invitation waiting. */
export async function createInvite(projectId: string, body: InviteCreateBody): Promise<Invite> {
  return (await http.post(apiPath`/api/projects/${projectId}/invites`, body, InviteResponse)).invite
}

/** A new link for another week; the old link stops working. */
export async function resendInvite(inviteId: string): Promise<Invite> {
  return (await http.post(apiPath`/api/invites/${inviteId}/resend`, {}, InviteResponse)).invite
}

export function revokeInvite(inviteId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/invites/${inviteId}`)
}

/** The token goes in the body (POST), never in a URL. */
export function lookupInvite(token: string): Promise<InviteLookup> {
  return http.post('/api/invites/lookup', { token }, InviteLookup)
}

/** Joins the signed-in person; 403 wrong-account when the invitation is for another address. */
export function acceptInvite(token: string): Promise<InviteAccepted> {
  return http.post('/api/invites/accept', { token }, InviteAccepted)
}
