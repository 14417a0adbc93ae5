import type { Kysely } from 'kysely'

// A viewing pass shows a project; taking its original scan files away is a separate permission the owner
// grants pass by pass (off unless asked for).
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('guest_links').addColumn('allow_download', 'boolean', (c) => c.notNull().defaultTo(false)).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('guest_links').dropColumn('allow_download').execute()
}
