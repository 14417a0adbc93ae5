import { CommentCreateBody, CommentParams, MarkerParams, ThreadsPageQuery } from '@shared/schemas'
import * as comments from '../services/comments'
import { defineRoute, type RouteDef } from './registry'

export const commentRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/markers/:markerId/comments',
    access: { kind: 'project', right: 'view' },
    params: MarkerParams,
    query: ThreadsPageQuery,
    handler: async ({ services, params, query }) => ({ body: await comments.threadsOf(services, params.markerId, query) }),
  }),
  defineRoute({
    method: 'post',
    path: '/markers/:markerId/comments',
    access: { kind: 'project', right: 'comment' },
    params: MarkerParams,
    body: CommentCreateBody,
    handler: async ({ services, params, body, user }) => ({ status: 201, body: await comments.addComment(services, params.markerId, body, user?.id ?? null) }),
  }),
  defineRoute({
    method: 'post',
    path: '/comments/:commentId/resolve',
    access: { kind: 'project', right: 'comment' },
    params: CommentParams,
    handler: async ({ services, params, user }) => ({ body: { thread: await comments.setResolved(services, params.commentId, true, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/comments/:commentId/reopen',
    access: { kind: 'project', right: 'comment' },
    params: CommentParams,
    handler: async ({ services, params, user }) => ({ body: { thread: await comments.setResolved(services, params.commentId, false, user?.id ?? null) } }),
  }),
]
