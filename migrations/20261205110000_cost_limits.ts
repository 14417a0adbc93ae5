import { sql, type Kysely } from 'kysely'

// Per-project costs: a daily upload quota and a point limit per scan (both set by the project's owner), a
// ledger of the bytes each project received (deleting a scan does not give its bytes back for the day),
// the processing attempts of a scan (three crashed or stalled attempts fail it), and rig keys that expire
// (keys made before this get 90 days from now).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .alterTable('projects')
    .addColumn('daily_upload_bytes', 'bigint', (c) => c.notNull().defaultTo(200 * 1024 ** 3))
    .addColumn('max_scan_points', 'bigint', (c) => c.notNull().defaultTo(500_000_000))
    .execute()
  await db.schema
    .createTable('upload_usage')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    .addColumn('size_bytes', 'bigint', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('upload_usage_project').on('upload_usage').columns(['project_id', 'created_at']).execute()
  await sql`insert into upload_usage (project_id, size_bytes, created_at) select project_id, size_bytes, created_at from scans where created_at > now() - interval '1 day'`.execute(db)
  await db.schema
    .alterTable('scans')
    .addColumn('attempts', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('claimed_by', 'text')
    .execute()
  await db.schema.alterTable('upload_tokens').addColumn('expires_at', 'timestamptz').execute()
  await sql`update upload_tokens set expires_at = now() + interval '90 days'`.execute(db)
  await sql`alter table upload_tokens alter column expires_at set not null`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('upload_tokens').dropColumn('expires_at').execute()
  await db.schema.alterTable('scans').dropColumn('claimed_by').dropColumn('attempts').execute()
  await db.schema.dropTable('upload_usage').execute()
  await db.schema.alterTable('projects').dropColumn('max_scan_points').dropColumn('daily_upload_bytes').execute()
}
