import { sql, type Kysely } from 'kysely'

// Named checkpoints of a scene ("issued to client"): the markers with their values and checks as they were
// when it was set, frozen as JSON, so later edits, re-checks and placement moves never change what was issued.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('scene_checkpoints')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('markers', 'jsonb', (c) => c.notNull())
    .addColumn('marker_count', 'integer', (c) => c.notNull())
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addUniqueConstraint('scene_checkpoints_name', ['scene_id', 'name'])
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('scene_checkpoints').execute()
}
