import { sql } from 'kysely'
import type { Conn } from '../db'
import type { Insertable } from 'kysely'
import type { UploadRow, UploadsTable } from '../db/schema'

/** pg returns bigint columns as text; sizes here stay far below 2^53. */
function sized<T extends UploadRow | undefined>(row: T): T {
  return (row && { ...row, declared_size: Number(row.declared_size), part_size: Number(row.part_size) }) as T
}

export async function insertUploadRow(db: Conn, row: Insertable<UploadsTable>) {
  return sized(await db.insertInto('uploads').values(row).returningAll().executeTakeFirstOrThrow())
}

export async function findUploadRow(db: Conn, id: string) {
  return sized(await db.selectFrom('uploads').selectAll().where('id', '=', id).executeTakeFirst())
}

/** The row, locked until the transaction ends (one complete at a time). */
export async function lockUploadRow(db: Conn, id: string) {
  return sized(await db.selectFrom('uploads').selectAll().where('id', '=', id).forUpdate().executeTakeFirst())
}

export async function projectOfUpload(db: Conn, id: string) {
  return db.selectFrom('uploads').select('project_id').where('id', '=', id).executeTakeFirst()
}

/** An unfinished upload of the same file (resume key) by the same person or rig key. */
export async function findResumable(db: Conn, projectId: string, resumeKey: string, by: { userId: string | null; tokenId: string | null }) {
  let q = db.selectFrom('uploads').selectAll().where('project_id', '=', projectId).where('resume_key', '=', resumeKey).where('status', '=', 'receiving')
  q = by.tokenId ? q.where('upload_token_id', '=', by.tokenId) : q.where('created_by', '=', by.userId).where('upload_token_id', 'is', null)
  return sized(await q.orderBy('created_at', 'desc').executeTakeFirst())
}

/** Bytes declared by a project's uploads under way (counted against its quota as if received). */
export async function bytesUnderWay(db: Conn, projectId: string, except: string | null = null): Promise<number> {
  let q = db.selectFrom('uploads').select(sql<string>`coalesce(sum(declared_size), 0)`.as('bytes')).where('project_id', '=', projectId).where('status', 'in', ['receiving', 'completing'])
  if (except) q = q.where('id', '<>', except)
  return Number((await q.executeTakeFirstOrThrow()).bytes)
}

export function touchUpload(db: Conn, id: string) {
  return db.updateTable('uploads').set({ updated_at: sql`now()` }).where('id', '=', id).execute()
}

export function setUploadStatus(db: Conn, id: string, status: 'receiving' | 'completing' | 'complete' | 'abandoned') {
  return db.updateTable('uploads').set({ status, updated_at: sql`now()` }).where('id', '=', id).execute()
}

export async function listParts(db: Conn, uploadId: string) {
  const rows = await db.selectFrom('upload_parts').select(['part_number', 'etag', 'size_bytes']).where('upload_id', '=', uploadId).orderBy('part_number').execute()
  return rows.map((r) => ({ ...r, size_bytes: Number(r.size_bytes) }))
}

/** Records a stored part; a part sent again replaces the earlier one (as object storage does). */
export function upsertPart(db: Conn, v: { uploadId: string; partNumber: number; etag: string; sizeBytes: number }) {
  return db
    .insertInto('upload_parts')
    .values({ upload_id: v.uploadId, part_number: v.partNumber, etag: v.etag, size_bytes: v.sizeBytes })
    .onConflict((oc) => oc.columns(['upload_id', 'part_number']).doUpdateSet({ etag: v.etag, size_bytes: v.sizeBytes, created_at: sql`now()` }))
    .execute()
}

/** Uploads still receiving and untouched since `before`. */
export function idleUploads(db: Conn, before: Date) {
  return db.selectFrom('uploads').select(['id', 'object_key', 's3_upload_id']).where('status', '=', 'receiving').where('updated_at', '<', before).execute()
}
