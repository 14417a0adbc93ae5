import { CheckpointCreateBody, CheckpointParams, SceneParams } from '@shared/schemas'
import * as checkpoints from '../services/checkpoints'
import { defineRoute, type RouteDef } from './registry'

export const checkpointRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/checkpoints',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: { checkpoints: await checkpoints.checkpointsOf(services, params.sceneId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/checkpoints',
    access: { kind: 'project', right: 'editMarkers' },
    params: SceneParams,
    body: CheckpointCreateBody,
    handler: async ({ services, params, body, user }) => ({ status: 201, body: { checkpoint: await checkpoints.setCheckpoint(services, params.sceneId, body.name, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/checkpoints/:checkpointId',
    access: { kind: 'project', right: 'view' },
    params: CheckpointParams,
    handler: async ({ services, params }) => ({ body: { checkpoint: await checkpoints.getCheckpoint(services, params.checkpointId) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/checkpoints/:checkpointId',
    // What was issued is the project's record: only an owner takes it back.
    access: { kind: 'project', right: 'manage' },
    params: CheckpointParams,
    handler: async ({ services, params }) => {
      await checkpoints.removeCheckpoint(services, params.checkpointId)
    },
  }),
]
