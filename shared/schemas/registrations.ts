import { z } from 'zod'
import { Id, Timestamp } from './common'
import { PersonRef, Vec3 } from './markers'

/**
 * Registrations: aligning one placement (the moving one) onto another (the held one) by tie points, a
 * closed-form fit and an optional ICP refinement (shared/measure/README.md, "Registration"; issue "align stations").
 * Points are in the scene frame (metres, Z up); matrices are 16 numbers, column-major, rigid. A correction
 * maps the moving placement's points onto the held one's (held ~ C moving, scene frame); accepting it sets
 * the moving placement's matrix to C P_before.
 */

/** At most this many tie pairs in one fit (a person picks a handful; the cap keeps bodies small). */
export const MAX_TIE_PAIRS = 100
export const FIT_METHODS = ['svd', 'horn'] as const
export type FitMethodName = (typeof FIT_METHODS)[number]

/**
 * What a tie point stands for: the stored point nearest the click ('point'), or the centre of a sphere
 * target fitted to the stored points around it ('sphere'; the trade's derived point, see ASTM E3125).
 */
export const TIE_TARGETS = ['point', 'sphere'] as const
export type TieTarget = (typeof TIE_TARGETS)[number]

/** Sphere target radius limits, metres (the demo's are 72.5 mm). */
export const SPHERE_RADIUS = { min: 0.01, max: 0.5, default: 0.0725 } as const

/** ICP settings a person may change; the server picks the rest (server/services/registration.ts). */
export const REFINE_LIMITS = {
  maxDistance: { min: 0.002, max: 1 },
  sampleCap: { min: 1000, max: 400_000, default: 40_000 },
  maxIterations: { min: 1, max: 200, default: 50 },
} as const

export const REGISTRATION_STATES = ['draft', 'accepted', 'undone'] as const
export type RegistrationState = (typeof REGISTRATION_STATES)[number]
export const REGISTRATION_KINDS = ['fit', 'undo'] as const
/** Which figure is the placement's registration RMS (see registrationUncertainty in shared/measure/uncertainty.ts). */
export const RMS_SOURCES = ['check-points', 'icp', 'tie-points'] as const
export type RmsSource = (typeof RMS_SOURCES)[number]

const Coordinate = z.number({ error: 'must be a finite number (metres)' })
export const TiePointInput = z.object({ x: Coordinate, y: Coordinate, z: Coordinate }).strict()
export type TiePointInput = z.infer<typeof TiePointInput>

export const TiePairInput = z
  .object({
    moving: TiePointInput,
    held: TiePointInput,
    checkPoint: z.boolean({ error: 'must be true or false' }).default(false),
    enabled: z.boolean({ error: 'must be true or false' }).default(true),
    target: z.enum(TIE_TARGETS, { error: `must be one of ${TIE_TARGETS.join(', ')}` }).default('point'),
  })
  .strict()
export type TiePairInput = z.input<typeof TiePairInput>

export const RegistrationFitBody = z
  .object({
    movingInstanceId: Id,
    heldInstanceId: Id,
    pairs: z.array(TiePairInput, { error: 'must be a list of tie pairs' }).min(3, { error: 'at least 3 tie pairs are needed' }).max(MAX_TIE_PAIRS, { error: `at most ${MAX_TIE_PAIRS} tie pairs` }),
    method: z.enum(FIT_METHODS, { error: `must be one of ${FIT_METHODS.join(', ')}` }).default('svd'),
    /** Radius of the sphere targets of pairs with target 'sphere', metres. */
    sphereRadius: z.number({ error: 'must be a number (metres)' }).min(SPHERE_RADIUS.min, { error: `must be at least ${SPHERE_RADIUS.min} m` }).max(SPHERE_RADIUS.max, { error: `must be at most ${SPHERE_RADIUS.max} m` }).default(SPHERE_RADIUS.default),
  })
  .strict()
export type RegistrationFitBody = z.input<typeof RegistrationFitBody>

export const RegistrationRefineBody = z
  .object({
    movingInstanceId: Id,
    heldInstanceId: Id,
    /** A draft to refine from its fit; without it, a new draft starts from the placement as it is. */
    registrationId: Id.optional(),
    /** Pairs farther apart are outliers, metres (default: from the fit's residuals, else 0.1 m). */
    maxDistance: z.number({ error: 'must be a number (metres)' }).min(REFINE_LIMITS.maxDistance.min, { error: `must be at least ${REFINE_LIMITS.maxDistance.min} m` }).max(REFINE_LIMITS.maxDistance.max, { error: `must be at most ${REFINE_LIMITS.maxDistance.max} m` }).optional(),
    sampleCap: z.number({ error: 'must be a whole number' }).int({ error: 'must be a whole number' }).min(REFINE_LIMITS.sampleCap.min, { error: `must be at least ${REFINE_LIMITS.sampleCap.min}` }).max(REFINE_LIMITS.sampleCap.max, { error: `must be at most ${REFINE_LIMITS.sampleCap.max}` }).optional(),
    maxIterations: z.number({ error: 'must be a whole number' }).int({ error: 'must be a whole number' }).min(REFINE_LIMITS.maxIterations.min, { error: `must be at least ${REFINE_LIMITS.maxIterations.min}` }).max(REFINE_LIMITS.maxIterations.max, { error: `must be at most ${REFINE_LIMITS.maxIterations.max}` }).optional(),
  })
  .strict()
export type RegistrationRefineBody = z.input<typeof RegistrationRefineBody>

export const RegistrationParams = z.object({ registrationId: Id })

/** One side of a tie pair as the server took it. */
export const TieSide = z.object({
  /** Where the click was, scene frame. */
  picked: Vec3,
  /** The tie point: the nearest stored point, or the fitted sphere centre; scene frame at fit time. */
  point: Vec3,
  /** The same point in the placement's own (scan) frame. */
  local: Vec3,
  /** From the click to the nearest stored point, metres. */
  distance: z.number(),
  tolerance: z.number(),
  /** The fitted sphere, when the pair's target is a sphere. */
  sphere: z.object({ radius: z.number(), rms: z.number(), count: z.number().int() }).nullable(),
})
export type TieSide = z.infer<typeof TieSide>

export const TiePair = z.object({
  moving: TieSide,
  held: TieSide,
  checkPoint: z.boolean(),
  enabled: z.boolean(),
  target: z.enum(TIE_TARGETS),
  /** Under the registration's correction (the refined one once refined): C m - h, metres; null when disabled. */
  residual: Vec3.nullable(),
  distance: z.number().nullable(),
})
export type TiePair = z.infer<typeof TiePair>

/** Residual figures of the tie pairs under one correction. */
export const TieSummary = z.object({
  rms: z.number().nullable(),
  max: z.number().nullable(),
  count: z.number().int(),
  checkRms: z.number().nullable(),
  checkMax: z.number().nullable(),
  checkCount: z.number().int(),
})
export type TieSummary = z.infer<typeof TieSummary>

export const FitResult = TieSummary.extend({
  method: z.enum(FIT_METHODS),
  /** Scene-frame correction, column-major. */
  matrix: z.array(z.number()).length(16),
  quaternion: z.tuple([z.number(), z.number(), z.number(), z.number()]),
  rotationDegrees: z.number(),
  translation: Vec3,
})
export type FitResult = z.infer<typeof FitResult>

export const IcpIterationResult = z.object({
  rms: z.number(),
  pointRms: z.number(),
  overlap: z.number(),
  pairs: z.number().int(),
  fitted: z.number().int(),
})
export type IcpIterationResult = z.infer<typeof IcpIterationResult>

export const REFINE_STATUSES = ['running', 'done', 'failed', 'cancelled'] as const
export type RefineStatus = (typeof REFINE_STATUSES)[number]

export const RefineResult = z.object({
  /** This run's own id: a run stopped for a newer one on the same registration never writes over it. */
  runId: z.string(),
  status: z.enum(REFINE_STATUSES),
  /** What is happening now while running ('reading points', 'pairing'), else null. */
  stage: z.string().nullable(),
  startedFrom: z.enum(['fit', 'placement']),
  maxDistance: z.number(),
  sampleCap: z.number().int(),
  maxIterations: z.number().int(),
  iterations: z.array(IcpIterationResult),
  converged: z.boolean().nullable(),
  reason: z.string().nullable(),
  finalRms: z.number().nullable(),
  overlap: z.number().nullable(),
  sampleCount: z.number().int().nullable(),
  /** Scene-frame correction after refining, column-major; null until done. */
  matrix: z.array(z.number()).length(16).nullable(),
  /** When it was asked for. */
  startedAt: Timestamp,
  /** When the job began computing: after any refinement of the scene it replaced had stopped (latest wins). */
  began: Timestamp.nullable(),
  finishedAt: Timestamp.nullable(),
  seconds: z.number().nullable(),
})
export type RefineResult = z.infer<typeof RefineResult>

export const Registration = z.object({
  id: Id,
  sceneId: Id,
  kind: z.enum(REGISTRATION_KINDS),
  state: z.enum(REGISTRATION_STATES),
  movingInstanceId: Id,
  heldInstanceId: Id.nullable(),
  movingName: z.string(),
  heldName: z.string(),
  pairs: z.array(TiePair),
  fit: FitResult.nullable(),
  refine: RefineResult.nullable(),
  /** The tie pairs under `correction`. */
  residuals: TieSummary.nullable(),
  /** The correction accepting would apply (refined when refined, else the fit's); null when there is none yet. */
  correction: z.array(z.number()).length(16).nullable(),
  /** The placement's registration RMS this gives, metres, and which figure it is. */
  rms: z.number().nullable(),
  rmsSource: z.enum(RMS_SOURCES).nullable(),
  /** The per-axis standard uncertainty that enters each anchor's budget, metres. */
  registrationU: z.number().nullable(),
  matrixBefore: z.array(z.number()).length(16),
  heldMatrix: z.array(z.number()).length(16).nullable(),
  /** The placement's matrix once accepted (for a draft: what accepting would give). */
  matrixAfter: z.array(z.number()).length(16).nullable(),
  undoesId: Id.nullable(),
  createdBy: PersonRef,
  createdAt: Timestamp,
  acceptedBy: PersonRef,
  acceptedAt: Timestamp.nullable(),
  undoneBy: PersonRef,
  undoneAt: Timestamp.nullable(),
})
export type Registration = z.infer<typeof Registration>

/** A placement of the scene and the registration that holds for it now (the report). */
export const PlacementRegistration = z.object({
  instanceId: Id,
  name: z.string(),
  matrix: z.array(z.number()).length(16),
  /** The accepted registration whose matrix the placement still has; null: not aligned, or moved since. */
  registrationId: Id.nullable(),
  /** An accepted registration exists but the placement was moved since (by hand or by another registration). */
  movedSince: z.boolean(),
  rms: z.number().nullable(),
  rmsSource: z.enum(RMS_SOURCES).nullable(),
  registrationU: z.number().nullable(),
})
export type PlacementRegistration = z.infer<typeof PlacementRegistration>

export const RegistrationResponse = z.object({ registration: Registration })
export const RegistrationReport = z.object({ placements: z.array(PlacementRegistration), registrations: z.array(Registration) })
export type RegistrationReport = z.infer<typeof RegistrationReport>
