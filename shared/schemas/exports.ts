import { z } from 'zod'
import { Id, Timestamp } from './common'

/**
 * Exports of points: a scene (every placement) or one placement, as LAS 1.4 (ASPRS R15), E57 (ASTM E2807)
 * or binary PLY. `source` is what was exported; objects will join as a third kind.
 */
export const EXPORT_FORMATS = ['las', 'e57', 'ply'] as const
export const ExportFormat = z.enum(EXPORT_FORMATS, { error: "must be one of 'las', 'e57', 'ply'" })
export type ExportFormat = z.infer<typeof ExportFormat>

export const EXPORT_SOURCES = ['scene', 'placement', 'object'] as const
export const ExportSourceKind = z.enum(EXPORT_SOURCES)
export type ExportSourceKind = z.infer<typeof ExportSourceKind>

export const EXPORT_STATUSES = ['queued', 'running', 'ready', 'failed'] as const
export type ExportStatus = (typeof EXPORT_STATUSES)[number]

/** What the screen calls each format. */
export const EXPORT_FORMAT_LABELS: Record<ExportFormat, string> = {
  las: 'LAS 1.4',
  e57: 'E57',
  ply: 'PLY (binary)',
}

export const ExportCreateBody = z
  .object({
    format: ExportFormat,
    /** With an instance id: that placement alone; with an object id: the object's kept points; without: the whole scene. */
    instanceId: Id.optional(),
    objectId: Id.optional(),
  })
  .strict()
  .refine((b) => !(b.instanceId && b.objectId), { error: 'give instanceId (a placement) or objectId (an object), not both', path: ['objectId'] })
export type ExportCreateBody = z.infer<typeof ExportCreateBody>

export const Export = z.object({
  id: Id,
  projectId: Id,
  sceneId: Id,
  source: ExportSourceKind,
  instanceId: Id.nullable(),
  /** The object exported (source 'object'); null once it is deleted. */
  objectId: Id.nullable().default(null),
  format: ExportFormat,
  fileName: z.string(),
  status: z.enum(EXPORT_STATUSES),
  /** 0..1 */
  progress: z.number(),
  pointCount: z.number().int().nullable(),
  byteSize: z.number().int().nullable(),
  error: z.string().nullable(),
  requestedBy: Id.nullable(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
  finishedAt: Timestamp.nullable(),
})
export type Export = z.infer<typeof Export>

export const ExportParams = z.object({ exportId: Id })

export const ExportResponse = z.object({ export: Export })
export const ExportList = z.object({ exports: z.array(Export) })
