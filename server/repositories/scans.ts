import { sql } from 'kysely'
import type { Conn } from '../db'
import type { NewScan, ScanUpdate } from '../db/schema'

const scanColumns = (db: Conn) =>
  db.selectFrom('scans as s').leftJoin('users as u', 'u.id', 's.uploaded_by').leftJoin('upload_tokens as t', 't.id', 's.upload_token_id').selectAll('s').select(['u.name as uploader_name', 't.label as token_label'])

export type ScanWithUploaderRow = NonNullable<Awaited<ReturnType<typeof findScan>>>

export function findScan(db: Conn, scanId: string) {
  return scanColumns(db).where('s.id', '=', scanId).executeTakeFirst()
}

export function listScans(db: Conn, projectId: string) {
  return scanColumns(db).where('s.project_id', '=', projectId).orderBy('s.created_at', 'desc').orderBy('s.id').execute()
}

export function projectOfScan(db: Conn, scanId: string) {
  return db.selectFrom('scans').select('project_id').where('id', '=', scanId).executeTakeFirst()
}

export function insertScan(db: Conn, scan: NewScan) {
  return db.insertInto('scans').values(scan).returning('id').executeTakeFirstOrThrow()
}

export function updateScan(db: Conn, scanId: string, values: ScanUpdate) {
  return db.updateTable('scans').set({ ...values, updated_at: new Date() }).where('id', '=', scanId).execute()
}

/**
 * A write of the worker holding claim `claimId`: it counts only while that claim is the scan's current one.
 * Answers whether it did (false: another worker has taken the scan since; this one must stop).
 */
export async function updateClaimedScan(db: Conn, scanId: string, claimId: string, values: ScanUpdate): Promise<boolean> {
  const r = await db.updateTable('scans').set({ ...values, updated_at: new Date() }).where('id', '=', scanId).where('claim_id', '=', claimId).executeTakeFirst()
  return Number(r.numUpdatedRows) > 0
}

export function deleteScan(db: Conn, scanId: string) {
  return db.deleteFrom('scans').where('id', '=', scanId).returning(['blob_key']).executeTakeFirst()
}

/**
 * Takes a scan for processing: queued, or processing with a heartbeat older than `staleMs` (its worker
 * died). Returns nothing when another live worker has it or it is finished, so duplicate jobs are harmless.
 * Each claim counts an attempt; a scan that has had `maxAttempts` is not taken again (the sweeper fails it).
 * `worker` names the claiming process (host:pid), so a server can tell that its own worker stalled.
 */
export function claimScan(db: Conn, scanId: string, staleMs: number, maxAttempts: number, worker: string | null = null) {
  return db
    .updateTable('scans')
    .set((eb) => ({ status: 'processing', progress: 0, stage: 'starting', error: null, heartbeat_at: sql`now()`, updated_at: sql`now()`, attempts: eb('attempts', '+', 1), claimed_by: worker, claim_id: sql`gen_random_uuid()` }))
    .where('id', '=', scanId)
    .where('attempts', '<', maxAttempts)
    .where((eb) =>
      eb.or([
        eb('status', '=', 'queued'),
        eb.and([eb('status', '=', 'processing'), eb('heartbeat_at', '<', sql<Date>`now() - make_interval(secs => ${staleMs / 1000})`)]),
      ]),
    )
    .returningAll()
    .executeTakeFirst()
}

/** Why a scan out of attempts failed: what happened, how often, and what to do. */
export function attemptsMessage(attempts: number): string {
  return `Processing stopped ${attempts} times without finishing (the worker crashed or stalled each time), so the scan was given up to keep the queue moving. The file may be damaged or too large for the worker's memory: check it, or split it into smaller parts, and upload it again.`
}

/**
 * Scans whose worker stopped beating, or that were queued long ago and never taken. Those with attempts left
 * are queued again; those that used their `maxAttempts` fail with a message (they would only stall again).
 */
export async function requeueStaleScans(db: Conn, staleMs: number, maxAttempts: number) {
  const secs = staleMs / 1000
  const stale = (eb: any) =>
    eb.or([
      eb.and([eb('status', '=', 'processing'), eb('heartbeat_at', '<', sql<Date>`now() - make_interval(secs => ${secs})`)]),
      eb.and([eb('status', '=', 'queued'), eb('updated_at', '<', sql<Date>`now() - make_interval(secs => ${secs * 4})`)]),
    ])
  const failed = await db
    .updateTable('scans')
    .set({ status: 'failed', stage: null, heartbeat_at: null, error: attemptsMessage(maxAttempts), updated_at: sql`now()` })
    .where(stale)
    .where('attempts', '>=', maxAttempts)
    .returning(['id', 'claimed_by'])
    .execute()
  const queued = await db
    .updateTable('scans')
    .set({ status: 'queued', stage: 'waiting for a worker again', updated_at: sql`now()` })
    .where(stale)
    .where('attempts', '<', maxAttempts)
    .returning(['id', 'claimed_by'])
    .execute()
  return { failed, queued }
}

export function listTiles(db: Conn, scanId: string) {
  return db
    .selectFrom('scan_tiles')
    .select(['node_key', 'level', 'point_count', 'min_x', 'min_y', 'min_z', 'max_x', 'max_y', 'max_z', 'byte_size'])
    .where('scan_id', '=', scanId)
    .orderBy('level')
    .orderBy('node_key')
    .execute()
}

export function getTile(db: Conn, scanId: string, nodeKey: string) {
  return db.selectFrom('scan_tiles').select(['data']).where('scan_id', '=', scanId).where('node_key', '=', nodeKey).executeTakeFirst()
}

/**
 * Several tiles in one round trip, for the nearest-point search. base64 text is shorter than bytea's hex
 * output and decodes faster (measured: p50 3.9 vs 5.0 ms for a 570 KB tile); one query for the chain of
 * tiles round a query point instead of one per tile roughly halves a cold search.
 */
export async function getTilesForSearch(db: Conn, scanId: string, nodeKeys: string[]): Promise<Map<string, Buffer>> {
  const rows = await db
    .selectFrom('scan_tiles')
    .select((eb) => ['node_key', sql<string>`encode(${eb.ref('data')}, 'base64')`.as('data')])
    .where('scan_id', '=', scanId)
    .where('node_key', 'in', nodeKeys)
    .execute()
  return new Map(rows.map((r) => [r.node_key, Buffer.from(r.data, 'base64')]))
}

export function deleteTiles(db: Conn, scanId: string) {
  return db.deleteFrom('scan_tiles').where('scan_id', '=', scanId).execute()
}

/** Bytes the project received in the last 24 hours (deleted scans included). */
export async function uploadedToday(db: Conn, projectId: string): Promise<number> {
  const row = await db
    .selectFrom('upload_usage')
    .select((eb) => eb.fn.coalesce(eb.fn.sum<string>('size_bytes'), sql<string>`0`).as('bytes'))
    .where('project_id', '=', projectId)
    .where('created_at', '>', sql<Date>`now() - interval '1 day'`)
    .executeTakeFirstOrThrow()
  return Number(row.bytes)
}

export function recordUpload(db: Conn, projectId: string, bytes: number) {
  return db.insertInto('upload_usage').values({ project_id: projectId, size_bytes: bytes }).execute()
}
