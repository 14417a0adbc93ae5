import crypto from 'node:crypto'
import type { Scan, Upload, UploadCreateBody } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import type { UploadRow } from '../db/schema'
import { HttpError } from '../errors'
import {
  bytesUnderWay,
  findResumable,
  findUploadRow,
  idleUploads,
  insertUploadRow,
  listParts,
  lockUploadRow,
  setUploadStatus,
  touchUpload,
  upsertPart,
} from '../repositories/uploads'
import type { RigKey } from '../routes/registry'
import type { Services } from '../types'
import { bytesInWords, checkQuota, fileTooLarge, originalKey, startProcessing } from './scans'

/** S3 takes at most 10,000 parts in one multipart upload (Amazon S3 API, UploadPart). */
export const MAX_PARTS = 10_000
const MiB = 1024 ** 2

/**
 * The part size for a file: at least `minPartBytes`, larger (in whole MiB) where the file would otherwise
 * need more than 10,000 parts.
 */
export function partSizeFor(size: number, minPartBytes: number): number {
  const needed = Math.ceil(size / MAX_PARTS)
  return needed <= minPartBytes ? minPartBytes : Math.ceil(needed / MiB) * MiB
}

/** The bytes part `n` (from 1) of an upload must hold: the part size, or what is left for the last. */
export function partBytes(row: Pick<UploadRow, 'declared_size' | 'part_size' | 'part_count'>, n: number): number {
  return n < row.part_count ? row.part_size : row.declared_size - row.part_size * (row.part_count - 1)
}

type By = { userId: string | null; rigKey: RigKey | null }

async function toUpload(s: Services, row: UploadRow): Promise<Upload> {
  const parts = await listParts(s.db, row.id)
  return {
    id: row.id,
    projectId: row.project_id,
    scanId: row.scan_id,
    fileName: row.file_name,
    sizeBytes: Number(row.declared_size),
    partSize: Number(row.part_size),
    partCount: row.part_count,
    partsHeld: parts.map((p) => p.part_number),
    status: row.status,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

function storageDown(): HttpError {
  return new HttpError(503, ErrorCode.unavailable, 'Object storage did not answer; nothing was lost. Try again in a moment.')
}

/**
 * Creates a resumable upload, or finds the unfinished one of the same file (name, size, last-modified) by
 * the same person or rig key, so a resume sends only the parts storage does not hold. The declared size is
 * checked against the per-file limit and, with the bytes of the project's other uploads under way, its
 * daily quota.
 */
export async function createUpload(s: Services, projectId: string, body: UploadCreateBody, by: By): Promise<{ upload: Upload; resumed: boolean }> {
  const cfg = s.config.uploads.resumable
  if (body.sizeBytes > cfg.limitBytes) throw fileTooLarge(cfg.limitBytes, body.sizeBytes)
  const resumeKey = body.lastModified === undefined ? null : JSON.stringify([body.fileName, body.sizeBytes, body.lastModified])
  if (resumeKey) {
    const open = await findResumable(s.db, projectId, resumeKey, { userId: by.userId, tokenId: by.rigKey?.id ?? null })
    if (open) {
      await touchUpload(s.db, open.id)
      return { upload: await toUpload(s, (await findUploadRow(s.db, open.id))!), resumed: true }
    }
  }
  await checkQuota(s, projectId, body.sizeBytes, await bytesUnderWay(s.db, projectId))
  const partSize = partSizeFor(body.sizeBytes, cfg.minPartBytes)
  const partCount = Math.max(1, Math.ceil(body.sizeBytes / partSize))
  const scanId = crypto.randomUUID()
  const key = originalKey(projectId, scanId, body.fileName)
  let s3UploadId: string
  try {
    s3UploadId = await s.objects.createMultipart(key)
  } catch (err) {
    s.log.error({ err, key }, 'object storage refused to start a multipart upload')
    throw storageDown()
  }
  const row = await insertUploadRow(s.db, {
    project_id: projectId,
    scan_id: scanId,
    object_key: key,
    s3_upload_id: s3UploadId,
    file_name: body.fileName,
    scan_name: body.name ?? null,
    declared_format: body.format ?? null,
    declared_size: body.sizeBytes,
    part_size: partSize,
    part_count: partCount,
    resume_key: resumeKey,
    created_by: by.userId ?? by.rigKey?.createdBy ?? null,
    upload_token_id: by.rigKey?.id ?? null,
  })
  return { upload: await toUpload(s, row), resumed: false }
}

async function receivingUpload(s: Services, uploadId: string): Promise<UploadRow> {
  const row = await findUploadRow(s.db, uploadId)
  if (!row) throw HttpError.notFound('No such upload.')
  if (row.status !== 'receiving') throw HttpError.conflict(`This upload is ${row.status} and takes no more parts.`)
  return row
}

function checkPartNumber(row: UploadRow, n: number, where: string): void {
  if (n > row.part_count) throw HttpError.badRequest(`${where}: part ${n} is past the last part of this upload (${row.part_count}).`, where)
}

/** Presigned PUT URLs of the parts asked for, valid `partUrlSeconds`. */
export async function partUrls(s: Services, uploadId: string, parts: number[]): Promise<{ partNumber: number; url: string; expiresAt: string }[]> {
  const row = await receivingUpload(s, uploadId)
  parts.forEach((n, i) => checkPartNumber(row, n, `body.parts[${i}]`))
  const seconds = s.config.uploads.resumable.partUrlSeconds
  const expiresAt = new Date(Date.now() + seconds * 1000).toISOString()
  const urls = await Promise.all(parts.map(async (n) => ({ partNumber: n, url: await s.objects.partUrl(row.object_key, row.s3_upload_id, n, seconds), expiresAt })))
  await touchUpload(s.db, uploadId)
  return urls
}

/** Records a part the client stored: its number, the ETag storage answered and its size (which must be the part's). */
export async function confirmPart(s: Services, uploadId: string, partNumber: number, v: { etag: string; sizeBytes: number }): Promise<Upload> {
  const row = await receivingUpload(s, uploadId)
  checkPartNumber(row, partNumber, 'params.partNumber')
  const expected = partBytes(row, partNumber)
  if (v.sizeBytes !== expected) {
    throw HttpError.badRequest(`body.sizeBytes: part ${partNumber} of this upload holds ${expected} bytes (parts of ${row.part_size} bytes, the last one the rest), not ${v.sizeBytes}.`, 'sizeBytes')
  }
  await upsertPart(s.db, { uploadId, partNumber, etag: v.etag, sizeBytes: v.sizeBytes })
  await touchUpload(s.db, uploadId)
  return toUpload(s, row)
}

function listNumbers(ns: number[]): string {
  return ns.length <= 12 ? ns.join(', ') : `${ns.slice(0, 12).join(', ')} and ${ns.length - 12} more`
}

/**
 * Completes an upload: every part held and their total the declared size, then storage joins them, the
 * stored object's size is checked against the declared one, and the scan is queued through the same path
 * as every upload (services/scans.ts startProcessing; the worker sniffs and checks the content).
 */
export async function completeUpload(s: Services, uploadId: string, by: By): Promise<Scan> {
  const row = await s.db.transaction().execute(async (tx) => {
    const row = await lockUploadRow(tx, uploadId)
    if (!row) throw HttpError.notFound('No such upload.')
    if (row.status === 'complete') throw HttpError.conflict(`This upload is already complete: it became scan ${row.scan_id}.`)
    if (row.status !== 'receiving') throw HttpError.conflict(`This upload is ${row.status}; it cannot be completed.`)
    const parts = await listParts(tx, uploadId)
    const held = new Set(parts.map((p) => p.part_number))
    const missing: number[] = []
    for (let n = 1; n <= row.part_count; n++) if (!held.has(n)) missing.push(n)
    if (missing.length) {
      throw HttpError.conflict(`${missing.length} of this upload's ${row.part_count} parts are not stored yet (parts ${listNumbers(missing)}): send them, then complete again.`)
    }
    const total = parts.reduce((sum, p) => sum + Number(p.size_bytes), 0)
    if (total !== Number(row.declared_size)) {
      throw HttpError.badRequest(`The parts hold ${total} bytes but the upload declared ${row.declared_size}; nothing was kept as a scan.`)
    }
    await checkQuota(s, row.project_id, Number(row.declared_size), await bytesUnderWay(tx, row.project_id, row.id))
    await setUploadStatus(tx, row.id, 'completing')
    return { ...row, parts }
  })
  const declared = Number(row.declared_size)
  try {
    await s.objects.completeMultipart(
      row.object_key,
      row.s3_upload_id,
      row.parts.map((p) => ({ partNumber: p.part_number, etag: p.etag })),
    )
  } catch (err) {
    s.log.warn({ err, uploadId }, 'object storage refused to complete a multipart upload')
    await setUploadStatus(s.db, row.id, 'receiving')
    throw new HttpError(502, ErrorCode.unavailable, 'Object storage refused to join the parts (a part may differ from what was confirmed); the upload stays open: send the parts again, then complete again.')
  }
  let stored: number
  try {
    stored = await s.objects.size(row.object_key)
  } catch (err) {
    s.log.warn({ err, uploadId }, 'stored upload not found after completing')
    stored = -1
  }
  if (stored !== declared) {
    // The parts' true bytes differ from what was confirmed: the joined object is not the declared file.
    await s.objects.delete(row.object_key).catch((err: unknown) => s.log.warn({ err, key: row.object_key }, 'object not deleted'))
    await setUploadStatus(s.db, row.id, 'abandoned')
    throw HttpError.badRequest(
      `Object storage holds ${stored < 0 ? 'nothing' : `${stored} bytes (${bytesInWords(stored)})`} for this upload, but it declared ${declared} bytes (${bytesInWords(declared)}): the file was not kept. Send it again as a new upload.`,
    )
  }
  const scan = await startProcessing(s, {
    projectId: row.project_id,
    scanId: row.scan_id,
    blobKey: row.object_key,
    originalName: row.file_name,
    size: declared,
    // The bytes never pass through the server; the worker reads them (no digest is kept for these uploads).
    sha256: null,
    fields: { ...(row.scan_name ? { name: row.scan_name } : {}), ...(row.declared_format ? { format: row.declared_format as Scan['format'] & string } : {}) },
    by,
  })
  await setUploadStatus(s.db, row.id, 'complete')
  return scan
}

/** Gives an upload up: storage is told to drop its parts (the fake cannot; the sweeper's note says so). */
export async function abortUpload(s: Services, uploadId: string): Promise<void> {
  const row = await receivingUpload(s, uploadId)
  await s.objects.abortMultipart(row.object_key, row.s3_upload_id).catch((err: unknown) => s.log.warn({ err, uploadId }, 'multipart upload not aborted in object storage'))
  await setUploadStatus(s.db, uploadId, 'abandoned')
}

/** Abandons uploads untouched for `idleMs` (no part URL asked, no part confirmed); returns how many. */
export async function sweepIdleUploads(s: Services, now = Date.now()): Promise<number> {
  const idle = await idleUploads(s.db, new Date(now - s.config.uploads.resumable.idleMs))
  for (const u of idle) {
    await s.objects.abortMultipart(u.object_key, u.s3_upload_id).catch((err: unknown) => s.log.warn({ err, uploadId: u.id }, 'idle multipart upload not aborted in object storage'))
    await setUploadStatus(s.db, u.id, 'abandoned')
  }
  return idle.length
}
