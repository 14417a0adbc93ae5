import { sql, type Kysely } from 'kysely'

// Markers (current state; revisions come with the live documents) and the project's marker settings.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .alterTable('projects')
    // Metres; null means the default max(3 x the scan's mean spacing, 5 mm).
    .addColumn('anchor_tolerance', 'float8')
    .addColumn('required_margin', 'float8', (c) => c.notNull().defaultTo(0.05))
    .execute()

  await db.schema
    .createTable('markers')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('kind', 'text', (c) => c.notNull().check(sql`kind in ('distance', 'angle', 'section', 'clearance')`))
    .addColumn('label', 'text', (c) => c.notNull())
    // [{instanceId, x, y, z}] in each placement's own frame.
    .addColumn('anchors', 'jsonb', (c) => c.notNull())
    .addColumn('params', 'jsonb', (c) => c.notNull())
    // Bumped by every change of geometry, params or a placement it depends on; a check stores only if it
    // was computed for the current revision (latest wins).
    .addColumn('revision', 'integer', (c) => c.notNull().defaultTo(1))
    .addColumn('check_state', 'text', (c) =>
      c.notNull().defaultTo('pending').check(sql`check_state in ('pending', 'checked', 'off-scan', 'too-few-points', 'invalid-geometry')`),
    )
    .addColumn('check', 'jsonb')
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('updated_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('markers_scene').on('markers').columns(['scene_id', 'created_at']).execute()
  await db.schema.createIndex('markers_pending').on('markers').column('check_state').where(sql.ref('check_state'), '=', 'pending').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('markers').execute()
  await db.schema.alterTable('projects').dropColumn('required_margin').dropColumn('anchor_tolerance').execute()
}
