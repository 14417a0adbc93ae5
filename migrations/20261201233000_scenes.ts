import { sql, type Kysely } from 'kysely'

// Scenes of a project and the scans placed in them (instances: a rigid transform, visibility, colour).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('scenes')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('scenes_project').on('scenes').columns(['project_id', 'created_at']).execute()

  await db.schema
    .createTable('scene_instances')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    // A scan in use by a scene cannot be deleted away under it: deleting the scan removes its placements.
    .addColumn('scan_id', 'uuid', (c) => c.notNull().references('scans.id').onDelete('cascade'))
    .addColumn('matrix', sql`float8[]`, (c) => c.notNull())
    .addColumn('visible', 'boolean', (c) => c.notNull().defaultTo(true))
    .addColumn('color', 'text', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addCheckConstraint('scene_instances_matrix_16', sql`array_length(matrix, 1) = 16`)
    .execute()
  await db.schema.createIndex('scene_instances_scene').on('scene_instances').column('scene_id').execute()
  await db.schema.createIndex('scene_instances_scan').on('scene_instances').column('scan_id').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('scene_instances').execute()
  await db.schema.dropTable('scenes').execute()
}
