import { sql, type Kysely } from 'kysely'

// Resumable uploads straight to object storage (S3 multipart): one row per upload, from create to
// complete, and one row per part the client confirmed it stored (the storage fake cannot list parts, so the
// server keeps its own list). `resume_key` (file name, size and last-modified time as the browser reports
// them) lets a person who picks the same file again carry on with the same upload.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('uploads')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    // The scan this upload becomes: its id is chosen at create (the object key holds it); the row appears at complete.
    .addColumn('scan_id', 'uuid', (c) => c.notNull())
    .addColumn('object_key', 'text', (c) => c.notNull())
    .addColumn('s3_upload_id', 'text', (c) => c.notNull())
    .addColumn('file_name', 'text', (c) => c.notNull())
    .addColumn('scan_name', 'text')
    .addColumn('declared_format', 'text')
    .addColumn('declared_size', 'bigint', (c) => c.notNull())
    .addColumn('part_size', 'bigint', (c) => c.notNull())
    .addColumn('part_count', 'integer', (c) => c.notNull())
    .addColumn('resume_key', 'text')
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('receiving').check(sql`status in ('receiving', 'completing', 'complete', 'abandoned')`))
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('upload_token_id', 'uuid', (c) => c.references('upload_tokens.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('uploads_project_status').on('uploads').columns(['project_id', 'status']).execute()
  await db.schema.createIndex('uploads_idle').on('uploads').columns(['status', 'updated_at']).execute()
  await db.schema
    .createTable('upload_parts')
    .addColumn('upload_id', 'uuid', (c) => c.notNull().references('uploads.id').onDelete('cascade'))
    .addColumn('part_number', 'integer', (c) => c.notNull())
    .addColumn('etag', 'text', (c) => c.notNull())
    .addColumn('size_bytes', 'bigint', (c) => c.notNull())
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addPrimaryKeyConstraint('upload_parts_pk', ['upload_id', 'part_number'])
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('upload_parts').execute()
  await db.schema.dropTable('uploads').execute()
}
