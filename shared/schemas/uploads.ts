import { z } from 'zod'
import { Id, Timestamp } from './common'
import { ScanFormat } from './scans'

/**
 * Resumable uploads straight to object storage (S3 multipart with presigned part URLs). The client
 * declares the file, asks for part URLs, PUTs each part to storage, confirms it here, and completes.
 */
const Bytes = z.number({ error: 'must be a number of bytes' }).int({ error: 'must be a whole number of bytes' }).min(1, { error: 'must be at least 1 byte' })
const PartNumber = z.number({ error: 'must be a part number' }).int({ error: 'must be a whole part number' }).min(1, { error: 'must be at least 1' }).max(10_000, { error: 'must be at most 10000 (the most parts object storage takes)' })

export const UploadCreateBody = z.object({
  fileName: z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(255, { error: 'must be at most 255 characters' }),
  sizeBytes: Bytes.max(Number.MAX_SAFE_INTEGER),
  /** The file's last-modified time (ms since 1970) as the browser reports it; with name and size, the key of a resume. */
  lastModified: z.number({ error: 'must be a time in milliseconds' }).int({ error: 'must be a whole number of milliseconds' }).min(0).optional(),
  name: z.string({ error: 'must be text' }).trim().min(1, { error: 'must not be empty' }).max(160, { error: 'must be at most 160 characters' }).optional(),
  format: ScanFormat.optional(),
})
export type UploadCreateBody = z.infer<typeof UploadCreateBody>

export const UploadParams = z.object({ uploadId: Id })
export const UploadPartParams = z.object({
  uploadId: Id,
  partNumber: z.coerce.number({ error: 'must be a part number' }).pipe(PartNumber),
})

export const UploadPartUrlsBody = z.object({
  parts: z.array(PartNumber, { error: 'must be a list of part numbers' }).min(1, { error: 'must name at least one part' }).max(100, { error: 'must name at most 100 parts at once' }),
})

/** What object storage answered to the part's PUT: its ETag header, and the bytes sent. */
export const UploadPartConfirmBody = z.object({
  etag: z.string({ error: 'must be the ETag object storage answered' }).trim().min(1, { error: 'must not be empty' }).max(200, { error: 'must be at most 200 characters' }),
  sizeBytes: Bytes,
})

export const UPLOAD_STATUSES = ['receiving', 'completing', 'complete', 'abandoned'] as const

export const Upload = z.object({
  id: Id,
  projectId: Id,
  scanId: Id,
  fileName: z.string(),
  sizeBytes: z.number(),
  partSize: z.number(),
  partCount: z.number(),
  /** Part numbers object storage holds (confirmed), in order: a resume sends only the others. */
  partsHeld: z.array(z.number()),
  status: z.enum(UPLOAD_STATUSES),
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type Upload = z.infer<typeof Upload>

/** `resumed`: an unfinished upload of the same file (name, size, last-modified) was found and carries on. */
export const UploadCreated = z.object({ upload: Upload, resumed: z.boolean() })
export const UploadOne = z.object({ upload: Upload })
export const UploadPartUrls = z.object({
  urls: z.array(z.object({ partNumber: z.number(), url: z.string(), expiresAt: Timestamp })),
})
