import { sql, type Kysely } from 'kysely'

// Work done once across several server processes. Each process has a random id and beats in
// `server_processes`; a process whose beat is older than the lease (or whose row is gone) is dead. A marker's
// pending check is held by one process (`markers.check_owner`): only the holder stores its result, and a
// pending marker without a live holder is taken over by whichever process sweeps first. A running refinement
// records the process running it (`registrations.refine_owner`): only refinements of dead processes are
// failed as orphaned.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('server_processes')
    .addColumn('id', 'uuid', (c) => c.primaryKey())
    .addColumn('started_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('beat_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute()
  await db.schema.alterTable('markers').addColumn('check_owner', 'uuid').execute()
  await sql`create index markers_pending_owner on markers (check_owner) where check_state = 'pending'`.execute(db)
  await db.schema.alterTable('registrations').addColumn('refine_owner', 'uuid').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('registrations').dropColumn('refine_owner').execute()
  await sql`drop index markers_pending_owner`.execute(db)
  await db.schema.alterTable('markers').dropColumn('check_owner').execute()
  await db.schema.dropTable('server_processes').execute()
}
