import { sql, type Kysely } from 'kysely'

// A marker's history: one row per settled edit (an API write, or a live edit after 2 s idle), with the full
// state, so a timeline and a restore never depend on the live document's own (garbage-collected) history.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('marker_revisions')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    // No foreign key: the history of a deleted marker stays.
    .addColumn('marker_id', 'uuid', (c) => c.notNull())
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('revision', 'integer', (c) => c.notNull())
    .addColumn('action', 'text', (c) => c.notNull().check(sql`action in ('created', 'edited', 'deleted', 'restored')`))
    .addColumn('state', 'jsonb', (c) => c.notNull())
    .addColumn('user_id', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('marker_revisions_marker').on('marker_revisions').columns(['marker_id', 'id']).execute()
  await db.schema.createIndex('marker_revisions_scene_time').on('marker_revisions').columns(['scene_id', 'created_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('marker_revisions').execute()
}
