import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { Transform } from 'node:stream'
import type { Scan, ScanFormat, ScanUpdateBody, UploadToken } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { hashSecret, newSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import { sendIngest } from '../jobs/queue'
import { deleteScan, findScan, insertScan, listScans, updateScan } from '../repositories/scans'
import { findUploadToken, insertUploadToken, listUploadTokens, revokeUploadToken } from '../repositories/uploadTokens'
import type { RigKey } from '../routes/registry'
import type { Services } from '../types'
import { toScan, toUploadToken } from './mappers'

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
  const scanId = crypto.randomUUID()
  // multer decodes the file name as latin1; browsers send UTF-8.
  const originalName = Buffer.from(file.originalname, 'latin1').toString('utf8')
  const fileName = safeFileName(originalName)
  const blobKey = `projects/${projectId}/scans/${scanId}/${fileName}`
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
  await insertScan(s.db, {
    id: scanId,
    project_id: projectId,
    name: fields.name ?? (originalName.replace(/\.[^.]+$/, '') || 'Scan'),
    file_name: originalName,
    declared_format: fields.format ?? null,
    size_bytes: file.size,
    sha256: hash.digest('hex'),
    blob_key: blobKey,
    uploaded_by: by.userId ?? by.rigKey?.createdBy ?? null,
    upload_token_id: by.rigKey?.id ?? null,
    stage: 'waiting for a worker',
  })
  await sendIngest(s.boss, scanId)
  return getScan(s, scanId)
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
  await s.objects.delete(gone.blob_key).catch((err: unknown) => s.log.warn({ err, key: gone.blob_key }, 'original not deleted from object storage'))
}

export async function rigKeysOf(s: Services, projectId: string): Promise<UploadToken[]> {
  return (await listUploadTokens(s.db, projectId)).map(toUploadToken)
}

export async function createRigKey(s: Services, projectId: string, userId: string, label: string): Promise<{ token: UploadToken; secret: string }> {
  const secret = newSecret('smk_')
  const { id } = await insertUploadToken(s.db, { projectId, label, tokenHash: hashSecret(secret), hint: `${secret.slice(0, 8)}…${secret.slice(-4)}`, createdBy: userId })
  return { token: toUploadToken((await findUploadToken(s.db, id))!), secret }
}

export async function revokeRigKey(s: Services, tokenId: string): Promise<void> {
  await revokeUploadToken(s.db, tokenId)
}
