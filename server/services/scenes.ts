import type { Instance, InstanceCreateBody, InstanceUpdateBody, Scene, SceneSummary } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { IDENTITY, rigidProblem } from '@shared/geometry/rigidTransform'
import { HttpError } from '../errors'
import { findScan } from '../repositories/scans'
import * as repo from '../repositories/scenes'
import type { Services } from '../types'
import { toInstance, toSceneSummary } from './mappers'
import { placementChanged } from './markers'

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
  await repo.deleteScene(s.db, sceneId)
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

export async function editInstance(s: Services, instanceId: string, body: InstanceUpdateBody, userId: string | null = null): Promise<Instance> {
  const before = await repo.findInstance(s.db, instanceId)
  await repo.updateInstance(s.db, instanceId, body)
  const row = await repo.findInstance(s.db, instanceId)
  if (!row) throw HttpError.notFound('No such placement.')
  await repo.touchScene(s.db, row.scene_id)
  // Visibility and colour change nothing measured; a new transform moves the markers with it.
  const moved = body.matrix !== undefined && (!before || before.matrix.some((v, i) => Number(v) !== body.matrix![i]))
  if (moved) await placementChanged(s, row.scene_id, instanceId, { how: 'moved', name: row.scan_name, userId })
  await s.live.instanceChanged(row.scene_id, instanceId)
  return toInstance(row)
}

/** A placement as a writer left it in the work document: a rigid matrix, visibility, colour. */
export async function editInstanceMatrixFromLive(s: Services, instanceId: string, entry: { matrix: number[]; visible: boolean; color: string }, userId: string | null): Promise<boolean> {
  if (rigidProblem(entry.matrix) !== null || !/^#[0-9a-fA-F]{6}$/.test(entry.color)) return false
  const before = await repo.findInstance(s.db, instanceId)
  if (!before) return false
  await repo.updateInstance(s.db, instanceId, { matrix: entry.matrix, visible: entry.visible, color: entry.color })
  await repo.touchScene(s.db, before.scene_id)
  if (before.matrix.some((v, i) => v !== entry.matrix[i])) await placementChanged(s, before.scene_id, instanceId, { how: 'moved', name: before.scan_name, userId })
  return true
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
