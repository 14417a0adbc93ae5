import { z } from 'zod'
import { Id, Timestamp } from './common'

export const SCAN_FORMATS = ['ply', 'xyz', 'pcd', 'las', 'laz', 'station-log', 'e57'] as const
export const ScanFormat = z.enum(SCAN_FORMATS, { error: `must be one of ${SCAN_FORMATS.join(', ')}` })
export type ScanFormat = z.infer<typeof ScanFormat>

export const SCAN_STATUSES = ['queued', 'processing', 'ready', 'failed'] as const
export const ScanStatus = z.enum(SCAN_STATUSES)
export type ScanStatus = z.infer<typeof ScanStatus>

const Vec3 = z.tuple([z.number(), z.number(), z.number()])
export const Bounds = z.object({ min: Vec3, max: Vec3 })
export type Bounds = z.infer<typeof Bounds>

/** The station facts a station log carries (laser class for the eye-safety caution). */
export const StationInfo = z.object({
  stationId: z.string(),
  laserClass: z.string().nullable(),
  ratedRange: z.number().nullable(),
  shotsPerReading: z.number().nullable(),
  readings: z.number().int(),
})
export type StationInfo = z.infer<typeof StationInfo>

export const Scan = z.object({
  id: Id,
  projectId: Id,
  name: z.string(),
  fileName: z.string(),
  format: ScanFormat.nullable(),
  status: ScanStatus,
  /** 0..1 through the whole job; `stage` says which part runs. */
  progress: z.number(),
  stage: z.string().nullable(),
  error: z.string().nullable(),
  sizeBytes: z.number(),
  pointCount: z.number().nullable(),
  bounds: Bounds.nullable(),
  /** Mean nearest-neighbour spacing, metres. */
  spacing: z.number().nullable(),
  /** Standard uncertainty of one point, metres: entered if given, else estimated (or the station log's median). */
  pointUncertainty: z.number().nullable(),
  estimatedUncertainty: z.number().nullable(),
  enteredUncertainty: z.number().nullable(),
  uncertaintySource: z.enum(['per-point', 'estimated', 'entered']).nullable(),
  attributes: z.object({ color: z.boolean(), intensity: z.boolean(), perPointUncertainty: z.boolean() }),
  /** Points or readings left out, by reason. */
  dropped: z.record(z.string(), z.number()),
  station: StationInfo.nullable(),
  uploadedBy: z.string().nullable(),
  createdAt: Timestamp,
  readyAt: Timestamp.nullable(),
})
export type Scan = z.infer<typeof Scan>
export const ScanResponse = z.object({ scan: Scan })
export const ScanList = z.object({ scans: z.array(Scan) })

export const ScanParams = z.object({ scanId: Id })
export const TileParams = z.object({
  scanId: Id,
  nodeKey: z.string().regex(/^r[0-7]{0,30}$/, { error: 'is not a tile key (r followed by digits 0-7)' }),
})

const ScanName = z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(160, { error: 'must be at most 160 characters' })

/** Multipart fields beside `file`. */
export const ScanUploadFields = z.object({
  name: ScanName.optional(),
  format: ScanFormat.optional(),
})

export const ScanUpdateBody = z
  .object({
    name: ScanName,
    /** The instrument's stated standard uncertainty of one point in metres; null returns to the estimate. */
    enteredUncertainty: z.number({ error: 'must be a number of metres' }).positive({ error: 'must be above zero' }).max(1, { error: 'must be at most 1 m' }).nullable(),
  })
  .partial()
  .refine((v) => v.name !== undefined || v.enteredUncertainty !== undefined, { error: 'give a name or an uncertainty to change' })
export type ScanUpdateBody = z.infer<typeof ScanUpdateBody>

export const TileNode = z.object({
  key: z.string(),
  level: z.number().int(),
  pointCount: z.number().int(),
  bounds: Bounds,
  byteSize: z.number().int(),
})
export type TileNode = z.infer<typeof TileNode>
export const Hierarchy = z.object({ scanId: Id, pointCount: z.number(), bounds: Bounds, spacing: z.number().nullable(), nodes: z.array(TileNode) })
export type Hierarchy = z.infer<typeof Hierarchy>

const Coord = z.coerce.number({ error: 'must be a number' }).refine(Number.isFinite, { error: 'must be a finite number' })
export const NearestQuery = z.object({
  x: Coord,
  y: Coord,
  z: Coord,
  k: z.coerce.number().int({ error: 'must be a whole number' }).min(1, { error: 'must be at least 1' }).max(1000, { error: 'must be at most 1000' }).default(1),
  maxDistance: z.coerce.number().positive().optional(),
})
export const NearestResponse = z.object({ points: z.array(z.object({ x: z.number(), y: z.number(), z: z.number(), distance: z.number() })) })

export const UploadToken = z.object({
  id: Id,
  label: z.string(),
  hint: z.string(),
  createdBy: z.string().nullable(),
  createdAt: Timestamp,
  lastUsedAt: Timestamp.nullable(),
  revokedAt: Timestamp.nullable(),
  /** The key stops working at this time (the owner chose it at creation: 1 to 365 days, 90 by default). */
  expiresAt: Timestamp,
  /** Its maker is no longer a member of the project: the key no longer works. */
  makerLeft: z.boolean(),
})
export type UploadToken = z.infer<typeof UploadToken>
export const UploadTokenList = z.object({ tokens: z.array(UploadToken) })
/** The secret is shown once, at creation. */
export const UploadTokenCreated = z.object({ token: UploadToken, secret: z.string() })
export const RIG_KEY_DAYS = { default: 90, min: 1, max: 365 } as const
export const UploadTokenCreateBody = z.object({
  label: z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(80, { error: 'must be at most 80 characters' }),
  expiresInDays: z
    .number({ error: 'must be a whole number of days' })
    .int({ error: 'must be a whole number of days' })
    .min(RIG_KEY_DAYS.min, { error: `must be at least ${RIG_KEY_DAYS.min} day` })
    .max(RIG_KEY_DAYS.max, { error: `must be at most ${RIG_KEY_DAYS.max} days` })
    .default(RIG_KEY_DAYS.default),
})
export const UploadTokenParams = z.object({ tokenId: Id })
