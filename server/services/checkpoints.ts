import { Marker, type Checkpoint, type CheckpointDetail } from '@shared/schemas'
import { HttpError } from '../errors'
import * as repo from '../repositories/checkpoints'
import type { Services } from '../types'
import { markersOf } from './markers'

type Row = Awaited<ReturnType<typeof repo.listCheckpoints>>[number]

function toCheckpoint(row: Row): Checkpoint {
  return {
    id: row.id,
    sceneId: row.scene_id,
    name: row.name,
    markerCount: row.marker_count,
    createdBy: row.created_by && row.created_by_name ? { id: row.created_by, name: row.created_by_name } : null,
    createdAt: row.created_at.toISOString(),
  }
}

export async function checkpointsOf(s: Services, sceneId: string): Promise<Checkpoint[]> {
  return (await repo.listCheckpoints(s.db, sceneId)).map(toCheckpoint)
}

/**
 * Freezes the scene's markers as they are now, values and checks included. A checkpoint is what was issued,
 * so it waits for no check: while any marker is still being checked it is refused, naming them, rather than
 * freezing a value that is about to change.
 */
export async function setCheckpoint(s: Services, sceneId: string, name: string, userId: string | null): Promise<CheckpointDetail> {
  const markers = await markersOf(s, sceneId)
  const pending = markers.filter((m) => m.check.state === 'pending')
  if (pending.length > 0) {
    const names = pending.slice(0, 3).map((m) => `“${m.label}”`).join(', ')
    const more = pending.length > 3 ? ` and ${pending.length - 3} more` : ''
    throw HttpError.conflict(`${pending.length} marker${pending.length === 1 ? ' is' : 's are'} still being checked (${names}${more}); set the checkpoint once the checks are in.`)
  }
  const made = await repo.insertCheckpoint(s.db, { sceneId, name, markers, userId })
  if (!made) throw HttpError.conflict(`This scene already has a checkpoint named “${name}”; choose another name.`, 'name')
  return getCheckpoint(s, made.id)
}

export async function getCheckpoint(s: Services, id: string): Promise<CheckpointDetail> {
  const row = await repo.findCheckpoint(s.db, id)
  if (!row) throw HttpError.notFound('No such checkpoint.')
  return { ...toCheckpoint(row), markers: Marker.array().parse(row.markers) }
}

export async function removeCheckpoint(s: Services, id: string): Promise<void> {
  await repo.deleteCheckpoint(s.db, id)
}
