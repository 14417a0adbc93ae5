import { MemberParams, MemberUpdateBody, ProjectCreateBody, ProjectParams, ProjectUpdateBody } from '@shared/schemas'
import * as projects from '../services/projects'
import { defineRoute, type RouteDef } from './registry'

export const projectRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/projects',
    access: { kind: 'user' },
    handler: async ({ services, user }) => ({ body: { projects: await projects.listProjects(services, user!.id) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects',
    access: { kind: 'user' },
    body: ProjectCreateBody,
    handler: async ({ services, user, body }) => ({ status: 201, body: { project: await projects.createProject(services, user!.id, body) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/projects/:projectId',
    access: { kind: 'project', right: 'view' },
    params: ProjectParams,
    handler: async ({ services, params, membership }) => ({ body: { project: await projects.getProjectAs(services.db, params.projectId, membership!.role) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/projects/:projectId',
    access: { kind: 'project', right: 'manage' },
    params: ProjectParams,
    body: ProjectUpdateBody,
    handler: async ({ services, user, params, body }) => ({ body: { project: await projects.renameProject(services, params.projectId, user!.id, body) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/projects/:projectId',
    access: { kind: 'project', right: 'deleteProject' },
    params: ProjectParams,
    handler: async ({ services, params }) => {
      await projects.removeProject(services, params.projectId)
    },
  }),
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/members',
    access: { kind: 'project', right: 'view' },
    params: ProjectParams,
    handler: async ({ services, params, membership }) => ({ body: { members: await projects.members(services, params.projectId, membership!.role) } }),
  }),
  // People join only through an e-mailed invitation (routes/invites.ts): adding an address straight would
  // tell any owner whether that address has an account.
  defineRoute({
    method: 'patch',
    path: '/projects/:projectId/members/:userId',
    access: { kind: 'project', right: 'manage' },
    params: MemberParams,
    body: MemberUpdateBody,
    handler: async ({ services, params, body }) => ({ body: { member: await projects.setMemberRole(services, params.projectId, params.userId, body.role) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/projects/:projectId/members/:userId',
    access: { kind: 'project', right: 'manage' },
    params: MemberParams,
    handler: async ({ services, params }) => {
      await projects.removeMember(services, params.projectId, params.userId)
    },
  }),
]
