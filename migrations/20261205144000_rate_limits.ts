import type { Kysely } from 'kysely'

// Rate limits counted in PostgreSQL, so several server processes share one count per client (a fixed window
// per key: hits, and when the window ends).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('rate_limit_hits')
    .addColumn('key', 'text', (c) => c.primaryKey())
    .addColumn('hits', 'integer', (c) => c.notNull())
    .addColumn('reset_at', 'timestamptz', (c) => c.notNull())
    .execute()
  await db.schema.createIndex('rate_limit_hits_reset_at').on('rate_limit_hits').column('reset_at').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('rate_limit_hits').execute()
}
