import { sql, type Kysely } from 'kysely'

// Exports of a scene or one placement as LAS 1.4, E57 or PLY, made by a background job. `source` says what
// was exported ('scene' | 'placement'; objects join later with their own id column); the file lands in
// object storage under `object_key` once `status` is 'ready'.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('exports')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('source', 'text', (c) => c.notNull().check(sql`source in ('scene', 'placement')`))
    .addColumn('instance_id', 'uuid', (c) => c.references('scene_instances.id').onDelete('set null'))
    .addColumn('format', 'text', (c) => c.notNull().check(sql`format in ('las', 'e57', 'ply')`))
    .addColumn('file_name', 'text', (c) => c.notNull())
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('queued').check(sql`status in ('queued', 'running', 'ready', 'failed')`))
    .addColumn('progress', 'float8', (c) => c.notNull().defaultTo(0))
    .addColumn('point_count', 'int8')
    .addColumn('byte_size', 'int8')
    .addColumn('object_key', 'text')
    .addColumn('error', 'text')
    .addColumn('requested_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('finished_at', 'timestamptz')
    .execute()
  await db.schema.createIndex('exports_scene').on('exports').columns(['scene_id', 'created_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('exports').execute()
}
