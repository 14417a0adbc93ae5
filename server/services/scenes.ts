import type { Instance, InstanceCreateBody, Scene, SceneSummary } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { IDENTITY } from '@shared/geometry/rigidTransform'
import { HttpError } from '../errors'
import { findScan } from '../repositories/scans'
import * as repo from '../repositories/scenes'
import type { Services } from '../types'
import { toInstance, toSceneSummary } from './mappers'
import { placementChanged } from './markers'
import { checkPlacementEdit, SERVER_ACTOR, type Actor } from './markerWrites'

/** Display colours for placements, in turn: Spanmark's own, distinct from the marker colours. */
export const PLACEMENT_COLOURS = ['#E3B65C', '#7FA8CC', '#B68FD0', '#8DC48B', '#DC8F6E', '#CFC77C', '#6FC1B8', '#D98FB3']

export async function scenesOf(s: Services, projectId: string): Promise<SceneSummary[]> {
  return (await repo.listScenes(s.db, projectId)).map(toSceneSummary)
}

export async function getScene(s: Services, sceneId: string): Promise<Scene> {
  const row = await repo.findScene(s.db, sceneId)
  if (!row) throw HttpError.notFound('No such scene.')
  return { ...toSceneSummary(row), instances: (await repo.listInstances(s.db, sceneId)).map(toInstance) }
}

export async function createScene(s: Services, projectId: string, name: string, userId: string | null): Promise<Scene> {
  const { id } = await repo.insertScene(s.db, projectId, name, userId)
  return getScene(s, id)
}

export async function renameScene(s: Services, sceneId: string, name: string): Promise<Scene> {
  await repo.renameScene(s.db, sceneId, name)
  return getScene(s, sceneId)
}

export async function removeScene(s: Services, sceneId: string): Promise<void> {
  // The scene's export files go with it (their rows go by cascade); one still being written removes its own.
  const files = await s.db.selectFrom('exports').select('object_key').where('scene_id', '=', sceneId).where('object_key', 'is not', null).execute()
  await repo.deleteScene(s.db, sceneId)
  s.live.sceneDeleted(sceneId)
  for (const { object_key: key } of files) {
    await s.objects.delete(key!).catch((err: unknown) => s.log.warn({ err, key }, 'export file not deleted from object storage'))
  }
}

/** Places a ready scan of the same project in the scene. */
export async function addInstance(s: Services, sceneId: string, projectId: string, body: InstanceCreateBody): Promise<Instance> {
  const scan = await findScan(s.db, body.scanId)
  if (!scan || scan.project_id !== projectId) throw new HttpError(400, ErrorCode.invalidInput, 'body.scanId: no scan with this id in the project.', 'scanId')
  if (scan.status !== 'ready') throw new HttpError(409, ErrorCode.conflict, `The scan "${scan.name}" is ${scan.status}; only a ready scan can be placed.`, 'scanId')
  const existing = await repo.listInstances(s.db, sceneId)
  const { id } = await repo.insertInstance(s.db, {
    sceneId,
    scanId: body.scanId,
    matrix: [...(body.matrix ?? IDENTITY)],
    visible: body.visible,
    color: body.color ?? PLACEMENT_COLOURS[existing.length % PLACEMENT_COLOURS.length]!,
  })
  await repo.touchScene(s.db, sceneId)
  await s.live.instanceChanged(sceneId, id)
  return toInstance((await repo.findInstance(s.db, id))!)
}

/**
 * Moves, shows or colours a placement: the REST PATCH, a registration's accept (the server's actor) and a
 * live writer's change to its instances entry (`sceneId`: the document's scene) all come here, through the
 * same check (services/markerWrites.ts `checkPlacementEdit`).
 */
export async function editInstance(s: Services, instanceId: string, body: unknown, actor: Actor = SERVER_ACTOR, options: { sceneId?: string; fromLive?: boolean } = {}): Promise<Instance> {
  const { before, change } = await checkPlacementEdit(s, actor, instanceId, body, options.sceneId)
  await repo.updateInstance(s.db, instanceId, change)
  const row = await repo.findInstance(s.db, instanceId)
  if (!row) throw HttpError.notFound('No such placement.')
  await repo.touchScene(s.db, row.scene_id)
  // Visibility and colour change nothing measured; a new transform moves the markers with it.
  const moved = change.matrix !== undefined && before.matrix.some((v, i) => Number(v) !== change.matrix![i])
  if (moved) await placementChanged(s, row.scene_id, instanceId, { how: 'moved', name: row.scan_name, userId: actor.userId })
  if (!options.fromLive) await s.live.instanceChanged(row.scene_id, instanceId)
  return toInstance(row)
}

export async function removeInstance(s: Services, instanceId: string, userId: string | null = null): Promise<void> {
  const row = await repo.findInstance(s.db, instanceId)
  await repo.deleteInstance(s.db, instanceId)
  if (row) {
    await repo.touchScene(s.db, row.scene_id)
    await placementChanged(s, row.scene_id, instanceId, { how: 'removed', name: row.scan_name, userId })
    await s.live.instanceRemoved(row.scene_id, instanceId)
  }
}
