import { sql, type Kysely } from 'kysely'

// Exports of an object (its members' kept points: trims, scene cuts and stray points applied): source
// 'object' with the object's id (null once the object is deleted).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('exports').addColumn('object_id', 'uuid', (c) => c.references('scene_objects.id').onDelete('set null')).execute()
  await sql`alter table exports drop constraint exports_source_check`.execute(db)
  await sql`alter table exports add constraint exports_source_check check (source in ('scene', 'placement', 'object'))`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`delete from exports where source = 'object'`.execute(db)
  await sql`alter table exports drop constraint exports_source_check`.execute(db)
  await sql`alter table exports add constraint exports_source_check check (source in ('scene', 'placement'))`.execute(db)
  await db.schema.alterTable('exports').dropColumn('object_id').execute()
}
