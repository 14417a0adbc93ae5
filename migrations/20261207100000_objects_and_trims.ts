import { sql, type Kysely } from 'kysely'

// Objects and trims (shared/schemas/objects.ts). An object is a named set of a scene's placements
// (`object_members`, in the order given); a trim keeps or cuts points of one placement, either for one object
// (`object_id` set: the member's own trim) or for everything that reads the placement (`object_id` null: a
// scene cut). Shapes are stored in the placement's own frame (jsonb). `object_revisions` keeps every state
// of an object or a trim as written (the history and the timeline), like marker_revisions.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('scene_objects')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('name', 'text', (c) => c.notNull().check(sql`char_length(name) between 1 and 120`))
    .addColumn('stray', 'jsonb')
    .addColumn('revision', 'integer', (c) => c.notNull().defaultTo(1))
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('scene_objects_scene').on('scene_objects').column('scene_id').execute()
  await db.schema
    .createTable('object_members')
    .addColumn('object_id', 'uuid', (c) => c.notNull().references('scene_objects.id').onDelete('cascade'))
    .addColumn('instance_id', 'uuid', (c) => c.notNull().references('scene_instances.id').onDelete('cascade'))
    .addColumn('position', 'integer', (c) => c.notNull())
    .addPrimaryKeyConstraint('object_members_pk', ['object_id', 'instance_id'])
    .execute()
  await db.schema.createIndex('object_members_instance').on('object_members').column('instance_id').execute()
  await db.schema
    .createTable('trims')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('instance_id', 'uuid', (c) => c.notNull().references('scene_instances.id').onDelete('cascade'))
    .addColumn('object_id', 'uuid')
    .addColumn('mode', 'text', (c) => c.notNull().check(sql`mode in ('keep', 'cut')`))
    .addColumn('label', 'text')
    .addColumn('shape', 'jsonb', (c) => c.notNull())
    .addColumn('revision', 'integer', (c) => c.notNull().defaultTo(1))
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    // A member's trim goes with its membership (MATCH SIMPLE: a scene cut, object_id null, is not checked).
    .addForeignKeyConstraint('trims_member', ['object_id', 'instance_id'], 'object_members', ['object_id', 'instance_id'], (c) => c.onDelete('cascade'))
    // A scene cut only cuts.
    .addCheckConstraint('trims_scene_cut_cuts', sql`object_id is not null or mode = 'cut'`)
    .execute()
  await db.schema.createIndex('trims_instance').on('trims').columns(['instance_id', 'object_id']).execute()
  await db.schema.createIndex('trims_object').on('trims').column('object_id').execute()
  await db.schema
    .createTable('object_revisions')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    // No foreign keys: a deleted object or trim keeps its history.
    .addColumn('object_id', 'uuid')
    .addColumn('trim_id', 'uuid')
    .addColumn('action', 'text', (c) => c.notNull().check(sql`action in ('created', 'edited', 'deleted')`))
    .addColumn('state', 'jsonb', (c) => c.notNull())
    .addColumn('user_id', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addCheckConstraint('object_revisions_of_something', sql`object_id is not null or trim_id is not null`)
    .execute()
  await db.schema.createIndex('object_revisions_scene').on('object_revisions').columns(['scene_id', 'created_at']).execute()
  await db.schema.createIndex('object_revisions_object').on('object_revisions').columns(['object_id', 'created_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('object_revisions').execute()
  await db.schema.dropTable('trims').execute()
  await db.schema.dropTable('object_members').execute()
  await db.schema.dropTable('scene_objects').execute()
}
