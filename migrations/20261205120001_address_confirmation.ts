import { sql, type Kysely } from 'kysely'

/**
 * Addresses are proven: a new account confirms its e-mail address by a one-time link (stored as SHA-256)
 * before it can accept an invitation. Accounts made before this count as confirmed.
 * Failed sign-ins slow down per address: `sign_in_failures` keeps the count and the time of the last one,
 * keyed by the address typed (known or not, so the delay tells nobody whether an account exists).
 */
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('users').addColumn('email_confirmed_at', 'timestamptz').execute()
  await sql`update users set email_confirmed_at = created_at`.execute(db)

  await db.schema
    .createTable('email_confirmations')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('user_id', 'uuid', (c) => c.notNull().references('users.id').onDelete('cascade'))
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('expires_at', 'timestamptz', (c) => c.notNull())
    .addColumn('used_at', 'timestamptz')
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.createIndex('email_confirmations_user').on('email_confirmations').column('user_id').execute()

  await db.schema
    .createTable('sign_in_failures')
    .addColumn('email', 'text', (c) => c.primaryKey())
    .addColumn('failures', 'integer', (c) => c.notNull())
    .addColumn('last_failed_at', 'timestamptz', (c) => c.notNull())
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('sign_in_failures').execute()
  await db.schema.dropTable('email_confirmations').execute()
  await db.schema.alterTable('users').dropColumn('email_confirmed_at').execute()
}
