import { ProjectParams, UploadCreateBody, UploadParams, UploadPartConfirmBody, UploadPartParams, UploadPartUrlsBody } from '@shared/schemas'
import * as uploads from '../services/uploads'
import { defineRoute, type RouteDef } from './registry'

/**
 * Resumable uploads straight to object storage, for the page and for a rig (its key in `Authorization:
 * Bearer`): create, part URLs, confirm each stored part, complete. The upload's project decides access.
 */
export const uploadRoutes: RouteDef[] = [
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/uploads',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: ProjectParams,
    limiter: 'upload',
    body: UploadCreateBody,
    handler: async ({ services, params, body, user, rigKey }) => {
      const created = await uploads.createUpload(services, params.projectId, body, { userId: user?.id ?? null, rigKey })
      return { status: created.resumed ? 200 : 201, body: created }
    },
  }),
  defineRoute({
    method: 'post',
    path: '/uploads/:uploadId/part-urls',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: UploadParams,
    body: UploadPartUrlsBody,
    handler: async ({ services, params, body }) => ({ body: { urls: await uploads.partUrls(services, params.uploadId, body.parts) } }),
  }),
  defineRoute({
    method: 'put',
    path: '/uploads/:uploadId/parts/:partNumber',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: UploadPartParams,
    body: UploadPartConfirmBody,
    handler: async ({ services, params, body }) => ({ body: { upload: await uploads.confirmPart(services, params.uploadId, params.partNumber, body) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/uploads/:uploadId/complete',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: UploadParams,
    handler: async ({ services, params, user, rigKey }) => ({ status: 202, body: { scan: await uploads.completeUpload(services, params.uploadId, { userId: user?.id ?? null, rigKey }) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/uploads/:uploadId',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: UploadParams,
    handler: async ({ services, params }) => {
      await uploads.abortUpload(services, params.uploadId)
    },
  }),
]
