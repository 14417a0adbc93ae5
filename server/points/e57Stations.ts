import type { Db } from '../db'
import type { ScansTable } from '../db/schema'
import { PLACEMENT_COLOURS } from '../services/scenes'
import type { E57File, E57ScanInfo } from './readers'
import type { Selectable } from 'kysely'

/**
 * An E57 file with several scans (stations) becomes one Spanmark scan per station. The upload's own scan
 * reads station 0; `createStations` adds a queued scan for each other station (same stored original,
 * `source_scan_id` the upload's scan, `station_index` its data3D entry). Every station keeps its points in
 * its own frame and its pose (`pose`); when the last one is ready, `completeStations` makes a scene named
 * after the upload with every station placed at its pose, in one step.
 */

/** A station's pose (unit quaternion w x y z, translation) as a column-major rigid 4x4. */
export function poseMatrix(pose: E57ScanInfo['pose']): number[] {
  const [w, x, y, z] = pose.rotation
  const [tx, ty, tz] = pose.translation
  return [
    1 - 2 * (y * y + z * z), 2 * (x * y + w * z), 2 * (x * z - w * y), 0,
    2 * (x * y - w * z), 1 - 2 * (x * x + z * z), 2 * (y * z + w * x), 0,
    2 * (x * z + w * y), 2 * (y * z - w * x), 1 - 2 * (x * x + y * y), 0,
    tx, ty, tz, 1,
  ]
}

function stationName(root: string, station: E57ScanInfo): string {
  const own = station.name?.trim() || `station ${station.index + 1}`
  return `${root}, ${own}`.slice(0, 160)
}

/** Marks the upload's scan as station 0 and adds the missing scans of the other stations; returns the new ids. */
export async function createStations(db: Db, root: Selectable<ScansTable>, file: E57File): Promise<string[]> {
  const count = file.scans.length
  await db.updateTable('scans').set({ station_index: 0, station_count: count, pose: poseMatrix(file.scans[0]!.pose), updated_at: new Date() }).where('id', '=', root.id).execute()
  const existing = await db.selectFrom('scans').select('station_index').where('source_scan_id', '=', root.id).execute()
  const have = new Set(existing.map((e) => e.station_index))
  const made: string[] = []
  for (const station of file.scans.slice(1)) {
    if (have.has(station.index)) continue
    const row = await db
      .insertInto('scans')
      .values({
        project_id: root.project_id,
        name: stationName(root.name, station),
        file_name: root.file_name,
        declared_format: root.declared_format,
        size_bytes: root.size_bytes,
        sha256: root.sha256,
        blob_key: root.blob_key,
        uploaded_by: root.uploaded_by,
        upload_token_id: root.upload_token_id,
        stage: 'waiting for a worker',
        source_scan_id: root.id,
        station_index: station.index,
        station_count: count,
        pose: poseMatrix(station.pose),
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    made.push(row.id)
  }
  return made
}

/**
 * Once every station of an upload is ready (and no scene was made yet), makes a scene named after the
 * upload with each station placed at its pose. Returns the scene's id when it made one.
 */
export async function completeStations(db: Db, rootId: string): Promise<string | null> {
  return db.transaction().execute(async (trx) => {
    const root = await trx.selectFrom('scans').selectAll().where('id', '=', rootId).forUpdate().executeTakeFirst()
    if (!root || root.stations_scene_id !== null || root.station_count === null) return null
    const stations = await trx
      .selectFrom('scans')
      .select(['id', 'status', 'station_index', 'pose'])
      .where((eb) => eb.or([eb('id', '=', rootId), eb('source_scan_id', '=', rootId)]))
      .orderBy('station_index')
      .execute()
    if (stations.length < root.station_count || stations.some((s) => s.status !== 'ready')) return null
    const scene = await trx
      .insertInto('scenes')
      .values({ project_id: root.project_id, name: root.name.slice(0, 120), created_by: root.uploaded_by })
      .returning('id')
      .executeTakeFirstOrThrow()
    for (const [i, s] of stations.entries()) {
      await trx
        .insertInto('scene_instances')
        .values({ scene_id: scene.id, scan_id: s.id, matrix: s.pose ?? [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1], visible: true, color: PLACEMENT_COLOURS[i % PLACEMENT_COLOURS.length]! })
        .execute()
    }
    await trx.updateTable('scans').set({ stations_scene_id: scene.id }).where('id', '=', rootId).execute()
    return scene.id
  })
}
