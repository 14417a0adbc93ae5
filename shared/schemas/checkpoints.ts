import { z } from 'zod'
import { Id, Timestamp } from './common'
import { Marker, PersonRef } from './markers'

/**
 * Named checkpoints of a scene ("issued to client"): the markers with their values and checks frozen as they
 * were when it was set. Later edits, re-checks and placement moves leave a checkpoint as it is.
 */
export const CheckpointParams = z.object({ checkpointId: Id })

export const CheckpointCreateBody = z
  .object({
    name: z
      .string({ error: 'must be text' })
      .trim()
      .min(1, { error: 'must not be empty' })
      .max(80, { error: 'must be at most 80 characters' }),
  })
  .strict()
export type CheckpointCreateBody = z.infer<typeof CheckpointCreateBody>

export const Checkpoint = z.object({
  id: Id,
  sceneId: Id,
  name: z.string(),
  markerCount: z.number().int(),
  createdBy: PersonRef,
  createdAt: Timestamp,
})
export type Checkpoint = z.infer<typeof Checkpoint>

export const CheckpointDetail = Checkpoint.extend({ markers: z.array(Marker) })
export type CheckpointDetail = z.infer<typeof CheckpointDetail>

export const CheckpointList = z.object({ checkpoints: z.array(Checkpoint) })
export const CheckpointResponse = z.object({ checkpoint: CheckpointDetail })
