import { RegistrationFitBody, RegistrationParams, RegistrationRefineBody, SceneParams } from '@shared/schemas'
import * as registrations from '../services/registration'
import { defineRoute, type RouteDef } from './registry'

/** Aligning stations ("align stations" is an editScans right, shared/auth/roles.ts; everyone may read the record). */
export const registrationRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/registrations',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: await registrations.registrationReport(services, params.sceneId) }),
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/registrations/fit',
    access: { kind: 'project', right: 'editScans' },
    params: SceneParams,
    body: RegistrationFitBody,
    handler: async ({ services, params, body, user }) => ({ status: 201, body: { registration: await registrations.fitRegistration(services, params.sceneId, body, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/registrations/refine',
    access: { kind: 'project', right: 'editScans' },
    params: SceneParams,
    body: RegistrationRefineBody,
    // Accepted: the refinement runs as a job; poll GET /registrations/:registrationId for its progress.
    handler: async ({ services, params, body, user }) => ({ status: 202, body: { registration: await registrations.startRefine(services, params.sceneId, body, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/registrations/:registrationId',
    access: { kind: 'project', right: 'view' },
    params: RegistrationParams,
    handler: async ({ services, params }) => ({ body: { registration: await registrations.getRegistration(services, params.registrationId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/registrations/:registrationId/accept',
    access: { kind: 'project', right: 'editScans' },
    params: RegistrationParams,
    handler: async ({ services, params, user }) => ({ body: { registration: await registrations.acceptRegistration(services, params.registrationId, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/registrations/:registrationId/undo',
    access: { kind: 'project', right: 'editScans' },
    params: RegistrationParams,
    handler: async ({ services, params, user }) => ({ status: 201, body: { registration: await registrations.undoRegistration(services, params.registrationId, user?.id ?? null) } }),
  }),
]
