import { InviteCreateBody, InviteParams, ProjectParams, TokenBody } from '@shared/schemas'
import * as invites from '../services/invites'
import { defineRoute, type RouteDef } from './registry'

/**
 * Invitations by e-mail. The e-mailed link carries its token in the URL fragment; the page sends it in a
 * request body (lookup, accept), never in a path or query, so no request log can hold it.
 */
export const inviteRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/invites',
    access: { kind: 'project', right: 'manage' },
    params: ProjectParams,
    handler: async ({ services, params }) => ({ body: { invites: await invites.listInvites(services, params.projectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/invites',
    access: { kind: 'project', right: 'manage' },
    limiter: 'invite',
    params: ProjectParams,
    body: InviteCreateBody,
    handler: async ({ services, params, user, body }) => ({ status: 201, body: { invite: await invites.createInvite(services, params.projectId, user!.id, body) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/invites/:inviteId/resend',
    access: { kind: 'project', right: 'manage' },
    limiter: 'invite',
    params: InviteParams,
    handler: async ({ services, params }) => ({ body: { invite: await invites.resendInvite(services, params.inviteId) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/invites/:inviteId',
    access: { kind: 'project', right: 'manage' },
    params: InviteParams,
    handler: async ({ services, params }) => {
      await invites.revokeInvite(services, params.inviteId)
    },
  }),
  defineRoute({
    // POST although it reads: the token belongs in a body, and a GET has none.
    method: 'post',
    path: '/invites/lookup',
    access: { kind: 'public' },
    limiter: 'tokenUse',
    body: TokenBody,
    handler: async ({ services, body }) => ({ body: await invites.lookupInvite(services, body.token) }),
  }),
  defineRoute({
    method: 'post',
    path: '/invites/accept',
    access: { kind: 'user' },
    limiter: 'tokenUse',
    body: TokenBody,
    handler: async ({ services, user, body }) => ({ body: await invites.acceptInvite(services, user!, body.token) }),
  }),
]
