import {
  InstanceResponse,
  SceneList,
  SceneResponse,
  SheetResponse,
  type Instance,
  type InstanceCreateBody,
  type InstanceUpdateBody,
  type Scene,
  type SceneSummary,
  type Sheet,
} from '@shared/schemas'
import { apiPath, http } from './http'

export async function listScenes(projectId: string, signal?: AbortSignal): Promise<SceneSummary[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/scenes`, SceneList, { signal })).scenes
}

export async function createScene(projectId: string, name: string): Promise<Scene> {
  return (await http.post(apiPath`/api/projects/${projectId}/scenes`, { name }, SceneResponse)).scene
}

/** The scene with its placements. */
export async function getScene(sceneId: string, signal?: AbortSignal): Promise<Scene> {
  return (await http.get(apiPath`/api/scenes/${sceneId}`, SceneResponse, { signal })).scene
}

export async function renameScene(sceneId: string, name: string): Promise<Scene> {
  return (await http.patch(apiPath`/api/scenes/${sceneId}`, { name }, SceneResponse)).scene
}

export function deleteScene(sceneId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/scenes/${sceneId}`)
}

/** Places a ready scan of the same project (the server refuses others). */
export async function addInstance(sceneId: string, body: Partial<InstanceCreateBody> & { scanId: string }): Promise<Instance> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/instances`, body, InstanceResponse)).instance
}

/** A matrix that is not rigid is a 400 naming the field `matrix`. */
export async function updateInstance(instanceId: string, body: InstanceUpdateBody): Promise<Instance> {
  return (await http.patch(apiPath`/api/instances/${instanceId}`, body, InstanceResponse)).instance
}

export function deleteInstance(instanceId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/instances/${instanceId}`)
}

/** The measurement sheet: now, or as a checkpoint froze it. */
export async function getSheet(sceneId: string, checkpointId: string | null, signal?: AbortSignal): Promise<Sheet> {
  const query = checkpointId ? `?checkpoint=${encodeURIComponent(checkpointId)}` : ''
  return (await http.get(`${apiPath`/api/scenes/${sceneId}/sheet`}${query}`, SheetResponse, { signal })).sheet
}

/** The sheet's CSV: the markers (by default) or the scans used with their registration. */
export function sheetCsvPath(sceneId: string, checkpointId: string | null, table: 'markers' | 'scans' = 'markers'): string {
  const query = new URLSearchParams()
  if (checkpointId) query.set('checkpoint', checkpointId)
  if (table === 'scans') query.set('table', 'scans')
  const q = query.toString()
  return `${apiPath`/api/scenes/${sceneId}/sheet.csv`}${q ? `?${q}` : ''}`
}
