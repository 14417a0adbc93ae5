import { InstanceCreateBody, InstanceParams, InstanceUpdateBody, ProjectParams, SceneCreateBody, SceneParams, SceneUpdateBody } from '@shared/schemas'
import * as scenes from '../services/scenes'
import { actorOf, defineRoute, type RouteDef } from './registry'

export const sceneRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/scenes',
    access: { kind: 'project', right: 'view' },
    params: ProjectParams,
    handler: async ({ services, params }) => ({ body: { scenes: await scenes.scenesOf(services, params.projectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/scenes',
    access: { kind: 'project', right: 'editScans' },
    params: ProjectParams,
    body: SceneCreateBody,
    handler: async ({ services, params, body, user }) => ({ status: 201, body: { scene: await scenes.createScene(services, params.projectId, body.name, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: { scene: await scenes.getScene(services, params.sceneId) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/scenes/:sceneId',
    access: { kind: 'project', right: 'editScans' },
    params: SceneParams,
    body: SceneUpdateBody,
    handler: async ({ services, params, body }) => ({ body: { scene: await scenes.renameScene(services, params.sceneId, body.name) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/scenes/:sceneId',
    access: { kind: 'project', right: 'editScans' },
    params: SceneParams,
    handler: async ({ services, params }) => {
      await scenes.removeScene(services, params.sceneId)
    },
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/instances',
    access: { kind: 'project', right: 'editScans' },
    params: SceneParams,
    body: InstanceCreateBody,
    handler: async ({ services, params, body, membership }) => ({ status: 201, body: { instance: await scenes.addInstance(services, params.sceneId, membership!.projectId, body) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/instances/:instanceId',
    access: { kind: 'project', right: 'editScans' },
    params: InstanceParams,
    body: InstanceUpdateBody,
    handler: async ({ services, params, body, user, membership }) => ({ body: { instance: await scenes.editInstance(services, params.instanceId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/instances/:instanceId',
    access: { kind: 'project', right: 'editScans' },
    params: InstanceParams,
    handler: async ({ services, params, user }) => {
      await scenes.removeInstance(services, params.instanceId, user?.id ?? null)
    },
  }),
]
