import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { Transform } from 'node:stream'
import type { Scan, ScanFormat, ScanUpdateBody, UploadToken } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { hashSecret, newSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import { sendIngest } from '../jobs/queue'
import { deleteScan, findScan, insertScan, listScans, recordUpload, updateScan, uploadedToday } from '../repositories/scans'
import { findUploadToken, insertUploadToken, listUploadTokens, revokeUploadToken } from '../repositories/uploadTokens'
import type { RigKey } from '../routes/registry'
import type { Services } from '../types'
import { toScan, toUploadToken } from './mappers'

/** Bytes in binary units, as limits are stated: "200 GiB", "1.5 MiB", "900 bytes". */
export function bytesInWords(n: number): string {
  if (n >= 1024 ** 3) return `${+(n / 1024 ** 3).toFixed(2)} GiB`
  if (n >= 1024 ** 2) return `${+(n / 1024 ** 2).toFixed(2)} MiB`
  if (n >= 1024) return `${+(n / 1024).toFixed(2)} KiB`
  return `${n} bytes`
}

/** Uploads being received and stored, per project, per server process. */
const inFlight = new WeakMap<Services, Map<string, number>>()

/** How many uploads of a project this process is receiving now (tests wait on it). */
export function uploadsArriving(s: Services, projectId: string): number {
  return inFlight.get(s)?.get(projectId) ?? 0
}

/**
 * Runs before the file is received: refuses (429, saying which limit, its number and what to do) when the
 * project already has `uploadsInFlightPerProject` uploads arriving, or when the request's declared length
 * would take the project past its daily quota. Returns the release of the slot taken (call it once the
 * response is done, however it ends).
 */
export async function admitUpload(s: Services, projectId: string, declaredBytes: number): Promise<() => void> {
  await checkQuota(s, projectId, declaredBytes)
  let counts = inFlight.get(s)
  if (!counts) inFlight.set(s, (counts = new Map()))
  const now = counts.get(projectId) ?? 0
  const cap = s.config.limits.uploadsInFlightPerProject
  if (now >= cap) {
    throw new HttpError(429, ErrorCode.tooManyRequests, `This project already has ${now} uploads arriving, the most it takes at once (${cap}). Wait for one of them to finish, then send this file again.`)
  }
  counts.set(projectId, now + 1)
  let released = false
  return () => {
    if (released) return
    released = true
    const left = (counts.get(projectId) ?? 1) - 1
    if (left > 0) counts.set(projectId, left)
    else counts.delete(projectId)
  }
}

interface Quota {
  used: number
  limit: number
}

async function quotaOf(s: Services, projectId: string): Promise<Quota> {
  const [project, used] = await Promise.all([
    s.db.selectFrom('projects').select('daily_upload_bytes').where('id', '=', projectId).executeTakeFirst(),
    uploadedToday(s.db, projectId),
  ])
  return { used, limit: Number(project?.daily_upload_bytes ?? 0) }
}

/**
 * Refuses (429, saying the quota, what was received and what is left) a file of `bytes` that would take the
 * project past its daily upload quota. `reservedBytes`: bytes of other uploads under way that are counted
 * as if received (resumable uploads declare their size at creation).
 */
export async function checkQuota(s: Services, projectId: string, bytes: number, reservedBytes = 0): Promise<void> {
  const quota = await quotaOf(s, projectId)
  quota.used += reservedBytes
  if (quota.used + bytes > quota.limit) throw overQuota(quota, bytes)
}

/** The refusal of a file over a per-file limit (413), as every upload path words it. */
export function fileTooLarge(limit: number, size?: number): HttpError {
  const what = size === undefined ? 'The file is' : `This file (${bytesInWords(size)}, ${size} bytes) is`
  return new HttpError(413, ErrorCode.payloadTooLarge, `${what} larger than the upload limit of ${bytesInWords(limit)} (${limit} bytes).`)
}

function overQuota(q: Quota, size: number): HttpError {
  const left = Math.max(0, q.limit - q.used)
  return new HttpError(
    429,
    ErrorCode.tooManyRequests,
    `This project's upload quota is ${bytesInWords(q.limit)} a day (any 24 hours); it has received ${bytesInWords(q.used)}, so ${bytesInWords(left)} is left and this file (${bytesInWords(size)}) does not fit. Send it later, or ask the project's owner to raise the daily upload quota in the project's settings.`,
  )
}

export async function getScan(s: Services, scanId: string): Promise<Scan> {
  const row = await findScan(s.db, scanId)
  if (!row) throw HttpError.notFound('No such scan.')
  return toScan(row)
}

export async function scansOf(s: Services, projectId: string): Promise<Scan[]> {
  return (await listScans(s.db, projectId)).map(toScan)
}

function safeFileName(name: string): string {
  const base = path.basename(name).replace(/[^\w.\-]+/g, '_').slice(-120)
  return base || 'upload'
}

/**
 * Takes a spooled upload: streams it to object storage (hashing it on the way), records the scan as
 * queued and queues its processing. Nothing is recorded unless the original is safely stored.
 */
export async function acceptUpload(
  s: Services,
  projectId: string,
  file: Pick<Express.Multer.File, 'path' | 'size' | 'originalname'>,
  fields: { name?: string; format?: ScanFormat },
  by: { userId: string | null; rigKey: RigKey | null },
): Promise<Scan> {
  // The declared length was checked before receiving; the file's true size is checked again here.
  await checkQuota(s, projectId, file.size)
  const scanId = crypto.randomUUID()
  // multer decodes the file name as latin1; browsers send UTF-8.
  const originalName = Buffer.from(file.originalname, 'latin1').toString('utf8')
  const blobKey = originalKey(projectId, scanId, originalName)
  const hash = crypto.createHash('sha256')
  const hashing = new Transform({
    transform(chunk: Buffer, _enc, cb) {
      hash.update(chunk)
      cb(null, chunk)
    },
  })
  try {
    await s.objects.put(blobKey, fs.createReadStream(file.path).pipe(hashing))
  } catch (err) {
    s.log.error({ err, blobKey }, 'object storage refused an upload')
    throw new HttpError(503, ErrorCode.unavailable, 'The file could not be stored (object storage did not answer); nothing was kept. Try again.')
  }
  return startProcessing(s, { projectId, scanId, blobKey, originalName, size: file.size, sha256: hash.digest('hex'), fields, by })
}

/** Where an upload's original is kept in object storage. */
export function originalKey(projectId: string, scanId: string, originalName: string): string {
  return `projects/${projectId}/scans/${scanId}/${safeFileName(originalName)}`
}

/**
 * An original safely in object storage becomes a queued scan: counted against the quota, recorded, and
 * its processing queued (the worker sniffs and checks the content). Every upload path ends here.
 */
export async function startProcessing(
  s: Services,
  v: { projectId: string; scanId: string; blobKey: string; originalName: string; size: number; sha256: string | null; fields: { name?: string; format?: ScanFormat }; by: { userId: string | null; rigKey: RigKey | null } },
): Promise<Scan> {
  await recordUpload(s.db, v.projectId, v.size)
  await insertScan(s.db, {
    id: v.scanId,
    project_id: v.projectId,
    name: v.fields.name ?? (v.originalName.replace(/\.[^.]+$/, '') || 'Scan'),
    file_name: v.originalName,
    declared_format: v.fields.format ?? null,
    size_bytes: v.size,
    sha256: v.sha256,
    blob_key: v.blobKey,
    uploaded_by: v.by.userId ?? v.by.rigKey?.createdBy ?? null,
    upload_token_id: v.by.rigKey?.id ?? null,
    stage: 'waiting for a worker',
  })
  await sendIngest(s.boss, v.scanId)
  return getScan(s, v.scanId)
}

export async function editScan(s: Services, scanId: string, body: ScanUpdateBody): Promise<Scan> {
  await updateScan(s.db, scanId, {
    ...(body.name !== undefined ? { name: body.name } : {}),
    ...(body.enteredUncertainty !== undefined ? { entered_uncertainty: body.enteredUncertainty } : {}),
  })
  return getScan(s, scanId)
}

/** Removes the scan, its tiles (by cascade) and its original. */
export async function removeScan(s: Services, scanId: string): Promise<void> {
  const gone = await deleteScan(s.db, scanId)
  if (!gone) return
  s.scanIndexes.forget(scanId)
  // The stations of one E57 upload share its stored original: it goes with the last of them.
  const sharing = await s.db.selectFrom('scans').select('id').where('blob_key', '=', gone.blob_key).executeTakeFirst()
  if (sharing) return
  await s.objects.delete(gone.blob_key).catch((err: unknown) => s.log.warn({ err, key: gone.blob_key }, 'original not deleted from object storage'))
}

export async function rigKeysOf(s: Services, projectId: string): Promise<UploadToken[]> {
  return (await listUploadTokens(s.db, projectId)).map(toUploadToken)
}

export async function createRigKey(s: Services, projectId: string, userId: string, body: { label: string; expiresInDays: number }): Promise<{ token: UploadToken; secret: string }> {
  const secret = newSecret('smk_')
  const { id } = await insertUploadToken(s.db, { projectId, label: body.label, tokenHash: hashSecret(secret), hint: `${secret.slice(0, 8)}…${secret.slice(-4)}`, createdBy: userId, expiresInDays: body.expiresInDays })
  return { token: toUploadToken((await findUploadToken(s.db, id))!), secret }
}

export async function revokeRigKey(s: Services, tokenId: string): Promise<void> {
  await revokeUploadToken(s.db, tokenId)
}
