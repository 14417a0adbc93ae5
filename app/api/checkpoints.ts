import { CheckpointList, CheckpointResponse, type Checkpoint, type CheckpointDetail } from '@shared/schemas'
import { apiPath, http } from './http'

export async function listCheckpoints(sceneId: string, signal?: AbortSignal): Promise<Checkpoint[]> {
  return (await http.get(apiPath`/api/scenes/${sceneId}/checkpoints`, CheckpointList, { signal })).checkpoints
}

/** Freezes the scene's markers with their values under a name; refused (409) while a check is pending. */
export async function createCheckpoint(sceneId: string, name: string): Promise<CheckpointDetail> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/checkpoints`, { name }, CheckpointResponse)).checkpoint
}

export async function getCheckpoint(checkpointId: string, signal?: AbortSignal): Promise<CheckpointDetail> {
  return (await http.get(apiPath`/api/checkpoints/${checkpointId}`, CheckpointResponse, { signal })).checkpoint
}

export function deleteCheckpoint(checkpointId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/checkpoints/${checkpointId}`)
}
