import { MarkerCreateBody, MarkerParams, MarkerRestoreBody, MarkerReviewBody, MarkerUpdateBody, SceneParams, SceneStateQuery, HistoryPageQuery } from '@shared/schemas'
import * as markers from '../services/markers'
import { actorOf, defineRoute, type RouteDef } from './registry'

export const markerRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/markers',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: { markers: await markers.markersOf(services, params.sceneId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/markers',
    access: { kind: 'project', right: 'editMarkers' },
    params: SceneParams,
    body: MarkerCreateBody,
    handler: async ({ services, params, body, user, membership }) => ({ status: 201, body: { marker: await markers.createMarker(services, params.sceneId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/state',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    query: SceneStateQuery,
    handler: async ({ services, params, query }) => ({ body: { at: new Date(query.at).toISOString(), revisions: await markers.sceneStateAt(services, params.sceneId, new Date(query.at)) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/markers/:markerId',
    access: { kind: 'project', right: 'view' },
    params: MarkerParams,
    handler: async ({ services, params }) => ({ body: { marker: await markers.getMarker(services, params.markerId) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/markers/:markerId',
    access: { kind: 'project', right: 'editMarkers' },
    params: MarkerParams,
    body: MarkerUpdateBody,
    handler: async ({ services, params, body, user, membership }) => ({ body: { marker: await markers.updateMarker(services, params.markerId, body, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/markers/:markerId',
    access: { kind: 'project', right: 'editMarkers' },
    params: MarkerParams,
    handler: async ({ services, params, user, membership }) => {
      await markers.removeMarker(services, params.markerId, actorOf(user, membership))
    },
  }),
  defineRoute({
    method: 'get',
    path: '/markers/:markerId/history',
    access: { kind: 'project', right: 'view' },
    params: MarkerParams,
    query: HistoryPageQuery,
    handler: async ({ services, params, query }) => ({ body: await markers.historyOf(services, params.markerId, query) }),
  }),
  defineRoute({
    method: 'post',
    path: '/markers/:markerId/restore',
    access: { kind: 'project', right: 'editMarkers' },
    params: MarkerParams,
    body: MarkerRestoreBody,
    handler: async ({ services, params, body, user, membership }) => ({ body: { marker: await markers.restoreMarker(services, params.markerId, body.revisionId, actorOf(user, membership)) } }),
  }),
  defineRoute({
    method: 'put',
    path: '/markers/:markerId/review',
    // Mentors and owners; never on their own marker (the service answers 403).
    access: { kind: 'project', right: 'review' },
    params: MarkerParams,
    body: MarkerReviewBody,
    handler: async ({ services, params, body, user }) => ({ body: { marker: await markers.reviewMarker(services, params.markerId, body, user?.id ?? null) } }),
  }),
]
