import { PassCreateBody, PassParams, ProjectParams, TokenBody } from '@shared/schemas'
import * as passes from '../services/passes'
import { defineRoute, type RouteDef } from './registry'

/** Viewing passes (guest links): owners issue and revoke them; a guest opens one with its e-mailed token. */
export const passRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/passes',
    access: { kind: 'project', right: 'manage' },
    params: ProjectParams,
    handler: async ({ services, params }) => ({ body: { passes: await passes.listPasses(services, params.projectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/passes',
    access: { kind: 'project', right: 'manage' },
    limiter: 'invite',
    params: ProjectParams,
    body: PassCreateBody,
    handler: async ({ services, params, user, body }) => ({ status: 201, body: { pass: await passes.createPass(services, params.projectId, user!.id, body) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/passes/:passId',
    access: { kind: 'project', right: 'manage' },
    params: PassParams,
    handler: async ({ services, params }) => {
      await passes.revokePass(services, params.passId)
    },
  }),
  defineRoute({
    method: 'post',
    path: '/passes/open',
    access: { kind: 'public' },
    limiter: 'tokenUse',
    body: TokenBody,
    handler: async ({ services, res, body, guest }) => ({ body: { guest: await passes.openPass(services, res, body.token, guest) } }),
  }),
]
