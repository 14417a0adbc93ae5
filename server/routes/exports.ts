import { ExportCreateBody, ExportParams, SceneParams } from '@shared/schemas'
import * as exportsService from '../services/exports'
import { defineRoute, type RouteDef } from './registry'

/**
 * Exports take points out of the product as files, so they need the same right as downloading an original
 * scan: every member role, and a guest only when the owner let their viewing pass download
 * (services/access.ts decides, as for /scans/:scanId/original).
 */
export const exportRoutes: RouteDef[] = [
  defineRoute({
    method: 'post',
    path: '/scenes/:sceneId/exports',
    access: { kind: 'project', right: 'downloadOriginals' },
    params: SceneParams,
    body: ExportCreateBody,
    handler: async ({ services, params, body, user }) => ({ status: 202, body: { export: await exportsService.createExport(services, params.sceneId, body, user?.id ?? null) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/exports',
    access: { kind: 'project', right: 'downloadOriginals' },
    params: SceneParams,
    handler: async ({ services, params }) => ({ body: { exports: await exportsService.exportsOfScene(services, params.sceneId) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/exports/:exportId',
    access: { kind: 'project', right: 'downloadOriginals' },
    params: ExportParams,
    handler: async ({ services, params }) => ({ body: { export: await exportsService.getExport(services, params.exportId) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/exports/:exportId/file',
    access: { kind: 'project', right: 'downloadOriginals' },
    params: ExportParams,
    handler: async ({ services, params, res }) => {
      const { export: done, body } = await exportsService.exportFile(services, params.exportId)
      res.setHeader('Content-Type', 'application/octet-stream')
      if (done.byteSize !== null) res.setHeader('Content-Length', String(done.byteSize))
      res.setHeader('Content-Disposition', `attachment; filename*=UTF-8''${encodeURIComponent(done.fileName)}`)
      res.setHeader('Cache-Control', 'private, no-store')
      await new Promise<void>((resolve, reject) => body.pipe(res).on('finish', resolve).on('error', reject))
    },
  }),
]
