import { z } from 'zod'
import { rigidProblem } from '../geometry/rigidTransform'
import { Id, Timestamp } from './common'

/** 16 numbers, column-major as three.js keeps them, rigid within 1e-6 (a hidden scale would break true scale). */
export const RigidMatrix = z
  .array(z.number({ error: 'must be numbers' }), { error: 'must be a list of 16 numbers (column-major)' })
  .length(16, { error: 'must have exactly 16 numbers (a 4x4 matrix, column-major)' })
  .superRefine((m, ctx) => {
    const problem = rigidProblem(m)
    if (problem) ctx.addIssue({ code: 'custom', message: `is not a rigid transform: ${problem}` })
  })

export const HexColor = z.string({ error: 'must be a colour such as #C98A12' }).regex(/^#[0-9a-fA-F]{6}$/, { error: 'must be a colour such as #C98A12' })

const SceneName = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(120, { error: 'must be at most 120 characters' })

/** A scan placed in a scene (the screen calls it a placement). */
export const Instance = z.object({
  id: Id,
  sceneId: Id,
  scanId: Id,
  scanName: z.string(),
  matrix: z.array(z.number()).length(16),
  visible: z.boolean(),
  color: z.string(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type Instance = z.infer<typeof Instance>

export const SceneSummary = z.object({
  id: Id,
  projectId: Id,
  name: z.string(),
  instanceCount: z.number().int(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type SceneSummary = z.infer<typeof SceneSummary>
export const Scene = SceneSummary.extend({ instances: z.array(Instance) })
export type Scene = z.infer<typeof Scene>

export const SceneList = z.object({ scenes: z.array(SceneSummary) })
export const SceneResponse = z.object({ scene: Scene })
export const InstanceResponse = z.object({ instance: Instance })

export const SceneParams = z.object({ sceneId: Id })
export const InstanceParams = z.object({ instanceId: Id })
export const SceneCreateBody = z.object({ name: SceneName })
export const SceneUpdateBody = z.object({ name: SceneName })

export const InstanceCreateBody = z.object({
  scanId: Id,
  matrix: RigidMatrix.optional(),
  visible: z.boolean({ error: 'must be true or false' }).default(true),
  color: HexColor.optional(),
})
export type InstanceCreateBody = z.infer<typeof InstanceCreateBody>
export const InstanceUpdateBody = z
  .object({ matrix: RigidMatrix, visible: z.boolean({ error: 'must be true or false' }), color: HexColor })
  .partial()
  .refine((v) => v.matrix !== undefined || v.visible !== undefined || v.color !== undefined, { error: 'give a matrix, visibility or colour to change' })
export type InstanceUpdateBody = z.infer<typeof InstanceUpdateBody>
