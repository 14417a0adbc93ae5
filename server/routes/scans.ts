import { ErrorCode } from '@shared/schemas/common'
import {
  NearestQuery,
  ProjectParams,
  ScanParams,
  ScanUpdateBody,
  ScanUploadFields,
  TileParams,
  UploadTokenCreateBody,
  UploadTokenParams,
} from '@shared/schemas'
import { HttpError } from '../errors'
import { getTile, listTiles } from '../repositories/scans'
import * as scans from '../services/scans'
import type { Guest } from '../types'
import { defineRoute, type Membership, type RouteDef } from './registry'

/** Members keep tiles a day: they never change while a scan stays ready (a new run gives a new ETag). */
const TILE_MAX_AGE_S = 86_400

/** The guest of a route answered through a viewing pass (a member holding a pass is answered as a member). */
function passGuest(membership: Membership | null, guest: Guest | null): Guest | null {
  return membership?.role === 'guest' ? guest : null
}

/**
 * A guest's copy of the points must not outlive the pass: private (no shared cache keeps it) and kept no
 * longer than the pass has left (RFC 9111 section 5.2.2.1 max-age, 5.2.2.7 private).
 */
function guestTileCacheControl(guest: Guest): string {
  const left = Math.max(0, Math.floor((guest.expiresAt.getTime() - Date.now()) / 1000))
  return `private, max-age=${Math.min(TILE_MAX_AGE_S, left)}`
}

export const scanRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/scans',
    access: { kind: 'project', right: 'view' },
    params: ProjectParams,
    handler: async ({ services, params }) => ({ body: { scans: await scans.scansOf(services, params.projectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/scans',
    access: { kind: 'project', right: 'editScans', rigKey: true },
    params: ProjectParams,
    limiter: 'upload',
    upload: { field: 'file' },
    body: ScanUploadFields,
    handler: async ({ services, params, body, file, user, rigKey }) => {
      if (!file) throw HttpError.badRequest("body.file: send the scan file as multipart/form-data in the field 'file'.", 'file')
      const scan = await scans.acceptUpload(services, params.projectId, file, body, { userId: user?.id ?? null, rigKey })
      return { status: 202, body: { scan } }
    },
  }),
  defineRoute({
    method: 'get',
    path: '/scans/:scanId',
    access: { kind: 'project', right: 'view' },
    params: ScanParams,
    handler: async ({ services, params }) => ({ body: { scan: await scans.getScan(services, params.scanId) } }),
  }),
  defineRoute({
    method: 'patch',
    path: '/scans/:scanId',
    access: { kind: 'project', right: 'editScans' },
    params: ScanParams,
    body: ScanUpdateBody,
    handler: async ({ services, params, body }) => ({ body: { scan: await scans.editScan(services, params.scanId, body) } }),
  }),
  defineRoute({
    method: 'delete',
    path: '/scans/:scanId',
    access: { kind: 'project', right: 'editScans' },
    params: ScanParams,
    handler: async ({ services, params }) => {
      await scans.removeScan(services, params.scanId)
    },
  }),
  defineRoute({
    method: 'get',
    path: '/scans/:scanId/original',
    // Members, and a guest whose viewing pass allows downloads (services/access.ts).
    access: { kind: 'project', right: 'downloadOriginals' },
    params: ScanParams,
    handler: async ({ services, params, res }) => {
      const scan = await scans.getScan(services, params.scanId)
      const row = await services.db.selectFrom('scans').select('blob_key').where('id', '=', params.scanId).executeTakeFirstOrThrow()
      const body = await services.objects.get(row.blob_key)
      res.setHeader('Content-Type', 'application/octet-stream')
      res.setHeader('Content-Length', String(scan.sizeBytes))
      res.setHeader('Content-Disposition', `attachment; filename*=UTF-8''${encodeURIComponent(scan.fileName)}`)
      await new Promise<void>((resolve, reject) => body.pipe(res).on('finish', resolve).on('error', reject))
    },
  }),
  defineRoute({
    method: 'get',
    path: '/scans/:scanId/hierarchy',
    access: { kind: 'project', right: 'view' },
    params: ScanParams,
    handler: async ({ services, params, membership, guest, res }) => {
      // Members revalidate by ETag as before; a guest's browser keeps no copy at all.
      if (passGuest(membership, guest)) res.setHeader('Cache-Control', 'private, no-store')
      const scan = await scans.getScan(services, params.scanId)
      if (scan.status !== 'ready' || !scan.bounds) throw new HttpError(409, ErrorCode.conflict, `The scan is ${scan.status}; its tiles exist once it is ready.`)
      const nodes = (await listTiles(services.db, params.scanId)).map((t) => ({
        key: t.node_key,
        level: t.level,
        pointCount: t.point_count,
        bounds: { min: [t.min_x, t.min_y, t.min_z], max: [t.max_x, t.max_y, t.max_z] },
        byteSize: t.byte_size,
      }))
      return { body: { scanId: scan.id, pointCount: scan.pointCount ?? 0, bounds: scan.bounds, spacing: scan.spacing, nodes } }
    },
  }),
  defineRoute({
    method: 'get',
    path: '/scans/:scanId/tiles/:nodeKey',
    access: { kind: 'project', right: 'view' },
    params: TileParams,
    handler: async ({ services, params, membership, guest, req, res }) => {
      const scan = await scans.getScan(services, params.scanId)
      if (scan.status !== 'ready') throw new HttpError(409, ErrorCode.conflict, `The scan is ${scan.status}; its tiles exist once it is ready.`)
      // Tiles never change while a scan stays ready; a new processing run gives a new readyAt.
      const etag = `"${scan.id}.${scan.readyAt ? Date.parse(scan.readyAt) : 0}.${params.nodeKey}"`
      const asGuest = passGuest(membership, guest)
      res.setHeader('ETag', etag)
      res.setHeader('Cache-Control', asGuest ? guestTileCacheControl(asGuest) : `private, max-age=${TILE_MAX_AGE_S}`)
      if (req.headers['if-none-match'] === etag) {
        res.status(304).end()
        return
      }
      const tile = await getTile(services.db, params.scanId, params.nodeKey)
      if (!tile) throw HttpError.notFound(`The scan has no tile ${params.nodeKey}.`)
      res.status(200).type('application/octet-stream').send(tile.data)
    },
  }),
  defineRoute({
    method: 'get',
    path: '/scans/:scanId/nearest',
    access: { kind: 'project', right: 'view' },
    params: ScanParams,
    query: NearestQuery,
    handler: async ({ services, params, query }) => {
      const scan = await scans.getScan(services, params.scanId)
      if (scan.status !== 'ready') throw new HttpError(409, ErrorCode.conflict, `The scan is ${scan.status}; its points can be searched once it is ready.`)
      const points = await services.scanIndexes.nearest(params.scanId, query.x, query.y, query.z, query.k, query.maxDistance)
      return { body: { points } }
    },
  }),
  defineRoute({
    method: 'get',
    path: '/projects/:projectId/upload-tokens',
    access: { kind: 'project', right: 'manage' },
    params: ProjectParams,
    handler: async ({ services, params }) => ({ body: { tokens: await scans.rigKeysOf(services, params.projectId) } }),
  }),
  defineRoute({
    method: 'post',
    path: '/projects/:projectId/upload-tokens',
    access: { kind: 'project', right: 'manage' },
    params: ProjectParams,
    body: UploadTokenCreateBody,
    handler: async ({ services, params, user, body }) => ({ status: 201, body: await scans.createRigKey(services, params.projectId, user!.id, body) }),
  }),
  defineRoute({
    method: 'delete',
    path: '/upload-tokens/:tokenId',
    access: { kind: 'project', right: 'manage' },
    params: UploadTokenParams,
    handler: async ({ services, params }) => {
      await scans.revokeRigKey(services, params.tokenId)
    },
  }),
]
