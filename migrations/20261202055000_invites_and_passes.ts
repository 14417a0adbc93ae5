import { sql, type Kysely } from 'kysely'

// Invitations by e-mail (a person joins with a role once they have an account) and viewing passes (a
// guest without an account sees one project read-only). Secrets are stored only as SHA-256: the e-mailed
// token, and a pass's guest session once the token has been swapped for it.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('invites')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    .addColumn('email', 'text', (c) => c.notNull())
    .addColumn('role', 'text', (c) => c.notNull())
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('invited_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('last_sent_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('expires_at', 'timestamptz', (c) => c.notNull())
    .addColumn('accepted_at', 'timestamptz')
    .addColumn('accepted_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('revoked_at', 'timestamptz')
    .addCheckConstraint('invites_role', sql`role in ('measurer', 'mentor')`)
    .addCheckConstraint('invites_email_lower', sql`email = lower(email)`)
    .execute()
  await db.schema.createIndex('invites_project_email').on('invites').columns(['project_id', 'email']).execute()

  await db.schema
    .createTable('guest_links')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('project_id', 'uuid', (c) => c.notNull().references('projects.id').onDelete('cascade'))
    .addColumn('email', 'text', (c) => c.notNull())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    // Set when the token is swapped (once) for the guest session cookie; the hash of that cookie's value.
    .addColumn('session_hash', 'text', (c) => c.unique())
    .addColumn('created_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('expires_at', 'timestamptz', (c) => c.notNull())
    .addColumn('opened_at', 'timestamptz')
    .addColumn('last_used_at', 'timestamptz')
    .addColumn('revoked_at', 'timestamptz')
    .addCheckConstraint('guest_links_email_lower', sql`email = lower(email)`)
    .execute()
  await db.schema.createIndex('guest_links_project').on('guest_links').columns(['project_id', 'created_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('guest_links').execute()
  await db.schema.dropTable('invites').execute()
}
