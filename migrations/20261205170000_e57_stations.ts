import { sql, type Kysely } from 'kysely'

// An E57 file with several scans (stations) becomes one Spanmark scan per station: the upload's own scan
// is station 0, the others are made by the worker and point to it (`source_scan_id`); each keeps the pose
// the file gives it (`pose`, a column-major rigid 4x4), and once all are ready the upload's scan records the
// scene made with them placed at their poses (`stations_scene_id`).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .alterTable('scans')
    .addColumn('source_scan_id', 'uuid', (c) => c.references('scans.id').onDelete('set null'))
    .addColumn('station_index', 'integer')
    .addColumn('station_count', 'integer')
    .addColumn('pose', sql`float8[]`)
    .addColumn('stations_scene_id', 'uuid', (c) => c.references('scenes.id').onDelete('set null'))
    .execute()
  await db.schema.createIndex('scans_source_scan_id').on('scans').column('source_scan_id').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('scans_source_scan_id').execute()
  await db.schema
    .alterTable('scans')
    .dropColumn('stations_scene_id')
    .dropColumn('pose')
    .dropColumn('station_count')
    .dropColumn('station_index')
    .dropColumn('source_scan_id')
    .execute()
}
