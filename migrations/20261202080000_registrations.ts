import { sql, type Kysely } from 'kysely'

// Registrations of a scene: aligning one placement (moving) onto another (held) by tie points, a closed-form
// fit and an optional ICP refinement. A draft holds the pairs and the results; accepting it sets the moving
// placement's matrix (matrix_before -> matrix_after) and its RMS enters the anchors' budgets; undoing it
// marks it undone and records the way back as a row of its own (kind 'undo').
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('registrations')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('kind', 'text', (c) => c.notNull().defaultTo('fit'))
    .addColumn('state', 'text', (c) => c.notNull().defaultTo('draft'))
    // A registration is about the placement it moves: it goes with it.
    .addColumn('moving_instance_id', 'uuid', (c) => c.notNull().references('scene_instances.id').onDelete('cascade'))
    // The held placement may be removed later; the record keeps its name.
    .addColumn('held_instance_id', 'uuid', (c) => c.references('scene_instances.id').onDelete('set null'))
    .addColumn('moving_name', 'text', (c) => c.notNull())
    .addColumn('held_name', 'text', (c) => c.notNull())
    .addColumn('method', 'text')
    // [{moving: {picked, snapped, local, distance, tolerance}, held: {...}, checkPoint, enabled}], scene frame at fit time.
    .addColumn('pairs', 'jsonb', (c) => c.notNull().defaultTo(sql`'[]'::jsonb`))
    // The closed-form result: correction matrix, residuals, RMS, maximum, check-point figures.
    .addColumn('fit', 'jsonb')
    // The ICP run: status, figures per iteration, overlap, convergence, the refined correction.
    .addColumn('icp', 'jsonb')
    // Scene-frame correction moving -> held (the fit's, or the refinement's), column-major.
    .addColumn('correction', sql`float8[]`)
    // The placement's registration RMS (metres), which figure it is, and the per-axis standard uncertainty it gives.
    .addColumn('rms', 'float8')
    .addColumn('rms_source', 'text')
    .addColumn('registration_u', 'float8')
    .addColumn('matrix_before', sql`float8[]`, (c) => c.notNull())
    .addColumn('held_matrix', sql`float8[]`)
    .addColumn('matrix_after', sql`float8[]`)
    .addColumn('undoes_id', 'uuid', (c) => c.references('registrations.id').onDelete('set null'))
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('accepted_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('accepted_at', 'timestamptz')
    .addColumn('undone_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('undone_at', 'timestamptz')
    .addCheckConstraint('registrations_kind', sql`kind in ('fit', 'undo')`)
    .addCheckConstraint('registrations_state', sql`state in ('draft', 'accepted', 'undone')`)
    .addCheckConstraint('registrations_rms_source', sql`rms_source is null or rms_source in ('check-points', 'icp', 'tie-points')`)
    .addCheckConstraint('registrations_matrices_16', sql`array_length(matrix_before, 1) = 16 and (matrix_after is null or array_length(matrix_after, 1) = 16) and (correction is null or array_length(correction, 1) = 16)`)
    .execute()
  await db.schema.createIndex('registrations_scene').on('registrations').columns(['scene_id', 'created_at']).execute()
  await db.schema.createIndex('registrations_moving').on('registrations').columns(['moving_instance_id', 'state', 'accepted_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('registrations').execute()
}
