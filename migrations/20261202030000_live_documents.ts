import { sql, type Kysely } from 'kysely'

// The live documents' update log and its compacted snapshots (server/collab/README.md): every accepted update is
// stored here before it is broadcast; a document loads as its latest snapshot plus the updates after it.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('scene_updates')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('doc', 'text', (c) => c.notNull().check(sql`doc in ('work', 'record')`))
    .addColumn('update', 'bytea', (c) => c.notNull())
    .addColumn('user_id', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('scene_updates_doc').on('scene_updates').columns(['scene_id', 'doc', 'id']).execute()

  await db.schema
    .createTable('scene_snapshots')
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('doc', 'text', (c) => c.notNull().check(sql`doc in ('work', 'record')`))
    .addColumn('state', 'bytea', (c) => c.notNull())
    // The last update folded into this snapshot.
    .addColumn('upto', 'bigint', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addPrimaryKeyConstraint('scene_snapshots_pk', ['scene_id', 'doc'])
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('scene_snapshots').execute()
  await db.schema.dropTable('scene_updates').execute()
}
