import { InstanceParams, ObjectCreateBody, ObjectParams, ObjectTrimCreateBody, ObjectUpdateBody, SceneCutCreateBody, SceneParams, TrimParams, TrimUpdateBody } from '@shared/schemas'
import * as objects from '../services/objects'
import { actorOf, defineRoute, type RouteDef } from './registry'

/**
 * Objects (a named set of a scene's placements, each with its trims) and trims (an object member's own, or a
 * placement's scene cuts). Shapes in and out in the scene frame. Every write goes through services/objects.ts,
 * the same functions the live work document calls.
 */
export const objectRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/objects',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: { objects: await objects.objectsOf(services, params.sceneId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/objects',
    access: { kind: 'project', right: 'editMarkers' },
    params: SceneParams,
    body: ObjectCreateBody,
    handler: async ({ services, params, body, user, membership }) => ({ status: 201, body: { object: await objects.createObject(services, params.sceneId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/objects/:objectId',
    access: { kind: 'project', right: 'view' },
    params: ObjectParams,
    handler: async ({ services, params }) => ({ body: { object: await objects.getObject(services, params.objectId) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/objects/:objectId',
    access: { kind: 'project', right: 'editMarkers' },
    params: ObjectParams,
    body: ObjectUpdateBody,
    handler: async ({ services, params, body, user, membership }) => ({ body: { object: await objects.updateObject(services, params.objectId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/objects/:objectId',
    access: { kind: 'project', right: 'editMarkers' },
    params: ObjectParams,
    handler: async ({ services, params, user, membership }) => {
      await objects.removeObject(services, params.objectId, actorOf(user, membership))
    },
  }),
  defineRoute({
    method: 'get',
    path: '/objects/:objectId/points',
    access: { kind: 'project', right: 'view' },
    params: ObjectParams,
    handler: async ({ services, params }) => ({ body: await objects.objectPointsOf(services, params.objectId) }),
  }),
  defineRoute({
    method: 'get',
    path: '/objects/:objectId/history',
    access: { kind: 'project', right: 'view' },
    params: ObjectParams,
    handler: async ({ services, params }) => ({ body: { revisions: await objects.historyOfObject(services, params.objectId) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/objects/:objectId/trims',
    access: { kind: 'project', right: 'view' },
    params: ObjectParams,
    handler: async ({ services, params }) => ({ body: { trims: await objects.trimsOfObject(services, params.objectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/objects/:objectId/trims',
    access: { kind: 'project', right: 'editMarkers' },
    params: ObjectParams,
    body: ObjectTrimCreateBody,
    handler: async ({ services, params, body, user, membership }) => ({ status: 201, body: { trim: await objects.createObjectTrim(services, params.objectId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/instances/:instanceId/trims',
    access: { kind: 'project', right: 'view' },
    params: InstanceParams,
    handler: async ({ services, params }) => ({ body: { trims: await objects.sceneCutsOf(services, params.instanceId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/instances/:instanceId/trims',
    access: { kind: 'project', right: 'editMarkers' },
    params: InstanceParams,
    body: SceneCutCreateBody,
    handler: async ({ services, params, body, user, membership }) => ({ status: 201, body: { trim: await objects.createSceneCut(services, params.instanceId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/trims/:trimId',
    access: { kind: 'project', right: 'view' },
    params: TrimParams,
    handler: async ({ services, params }) => ({ body: { trim: await objects.getTrim(services, params.trimId) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/trims/:trimId',
    access: { kind: 'project', right: 'editMarkers' },
    params: TrimParams,
    body: TrimUpdateBody,
    handler: async ({ services, params, body, user, membership }) => ({ body: { trim: await objects.updateTrim(services, params.trimId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/trims/:trimId',
    access: { kind: 'project', right: 'editMarkers' },
    params: TrimParams,
    handler: async ({ services, params, user, membership }) => {
      await objects.removeTrim(services, params.trimId, actorOf(user, membership))
    },
  }),
]
