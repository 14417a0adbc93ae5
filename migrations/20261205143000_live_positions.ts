import { sql, type Kysely } from 'kysely'

// Live documents served by several processes: each document's updates get positions in commit order (seq),
// taken from the document's own counter row (scene_documents.last_seq) under that row's lock, so a process
// catching up "after the last position it applied" cannot skip an update that committed late. Updates and
// snapshots stored before keep their ids as positions (ids grow with time, and one process wrote them).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('scene_documents')
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    .addColumn('doc', 'text', (c) => c.notNull().check(sql`doc in ('work', 'record')`))
    .addColumn('last_seq', 'bigint', (c) => c.notNull().defaultTo(0))
    .addPrimaryKeyConstraint('scene_documents_pk', ['scene_id', 'doc'])
    .execute()
  await db.schema.alterTable('scene_updates').addColumn('seq', 'bigint').execute()
  await sql`update scene_updates set seq = id`.execute(db)
  await sql`alter table scene_updates alter column seq set not null`.execute(db)
  await db.schema.createIndex('scene_updates_seq').on('scene_updates').columns(['scene_id', 'doc', 'seq']).unique().execute()
  await sql`
    insert into scene_documents (scene_id, doc, last_seq)
    select scene_id, doc, max(seq) from (
      select scene_id, doc, seq from scene_updates
      union all select scene_id, doc, upto from scene_snapshots
    ) s group by scene_id, doc`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('scene_updates_seq').execute()
  await db.schema.alterTable('scene_updates').dropColumn('seq').execute()
  await db.schema.dropTable('scene_documents').execute()
}
