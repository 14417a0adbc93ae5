import type { Readable } from 'node:stream'
import { ErrorCode } from '@shared/schemas/common'
import type { Export, ExportCreateBody } from '@shared/schemas'
import type { Selectable } from 'kysely'
import type { ExportsTable } from '../db/schema'
import { HttpError } from '../errors'
import { sendExport } from '../jobs/queue'
import { findExport, insertExport, listExports } from '../repositories/exports'
import { findInstance, findScene, listInstances } from '../repositories/scenes'
import { findObject, type ObjectRow } from '../repositories/objects'
import type { Services } from '../types'

/** The scene's list shows this many exports, newest first. */
const LISTED = 20

export function toExport(row: Selectable<ExportsTable>): Export {
  return {
    id: row.id,
    projectId: row.project_id,
    sceneId: row.scene_id,
    source: row.source,
    instanceId: row.instance_id,
    objectId: row.object_id,
    format: row.format,
    fileName: row.file_name,
    status: row.status,
    progress: row.progress,
    pointCount: row.point_count === null ? null : Number(row.point_count),
    byteSize: row.byte_size === null ? null : Number(row.byte_size),
    error: row.error,
    requestedBy: row.requested_by,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
    finishedAt: row.finished_at?.toISOString() ?? null,
  }
}

/** A file name from the scene's (and placement's) names: letters, digits, dashes and underscores. */
function fileNameOf(parts: string[], format: string): string {
  const stem = parts
    .map((p) => p.normalize('NFKD').replace(/[^\w.-]+/g, '-').replace(/^-+|-+$/g, ''))
    .filter(Boolean)
    .join('_')
    .slice(0, 120)
  return `${stem || 'export'}.${format}`
}

/**
 * Queues an export of the scene or one of its placements. Refused at once (409, naming the scan) while a
 * scan is not ready, so the job itself fails only on what it alone can find (a spread LAS cannot hold).
 */
export async function createExport(s: Services, sceneId: string, body: ExportCreateBody, userId: string | null): Promise<Export> {
  const scene = await findScene(s.db, sceneId)
  if (!scene) throw HttpError.notFound('No such scene.')
  let placements
  let object: ObjectRow | undefined
  if (body.objectId) {
    object = await findObject(s.db, body.objectId)
    if (!object || object.scene_id !== sceneId) throw new HttpError(404, ErrorCode.notFound, 'body.objectId: no such object in this scene.', 'objectId')
    const all = await listInstances(s.db, sceneId)
    placements = all.filter((p) => object!.members.includes(p.id))
  } else if (body.instanceId) {
    const instance = await findInstance(s.db, body.instanceId)
    if (!instance || instance.scene_id !== sceneId) throw new HttpError(404, ErrorCode.notFound, 'body.instanceId: no such placement in this scene.', 'instanceId')
    placements = [instance]
  } else {
    placements = await listInstances(s.db, sceneId)
    if (placements.length === 0) throw HttpError.conflict('The scene has no placements to export yet: place a scan in it first.')
  }
  const scanIds = [...new Set(placements.map((p) => p.scan_id))]
  const waiting = await s.db.selectFrom('scans').select(['name', 'status']).where('id', 'in', scanIds).where('status', '<>', 'ready').execute()
  if (waiting.length > 0) {
    throw HttpError.conflict(`The scan '${waiting[0]!.name}' is ${waiting[0]!.status}; a placement can be exported once its scan is ready.`)
  }
  const row = await insertExport(s.db, {
    project_id: scene.project_id,
    scene_id: sceneId,
    source: object ? 'object' : body.instanceId ? 'placement' : 'scene',
    instance_id: body.instanceId ?? null,
    object_id: object?.id ?? null,
    format: body.format,
    file_name: fileNameOf(object ? [scene.name, object.name] : body.instanceId ? [scene.name, placements[0]!.scan_name] : [scene.name], body.format),
    requested_by: userId,
  })
  await sendExport(s.boss, row.id)
  return toExport(row)
}

export async function exportsOfScene(s: Services, sceneId: string): Promise<Export[]> {
  return (await listExports(s.db, sceneId, LISTED)).map(toExport)
}

export async function getExport(s: Services, exportId: string): Promise<Export> {
  const row = await findExport(s.db, exportId)
  if (!row) throw HttpError.notFound('No such export.')
  return toExport(row)
}

/** The finished file as a stream from object storage; 409 while it is being made or when it failed. */
export async function exportFile(s: Services, exportId: string): Promise<{ export: Export; body: Readable }> {
  const row = await findExport(s.db, exportId)
  if (!row) throw HttpError.notFound('No such export.')
  if (row.status !== 'ready' || !row.object_key) {
    throw HttpError.conflict(row.status === 'failed' ? `This export failed, so there is no file: ${row.error ?? 'no reason was recorded'}` : `This export is ${row.status}; its file can be downloaded once it is ready.`)
  }
  return { export: toExport(row), body: await s.objects.get(row.object_key) }
}
