import { sql, type Kysely } from 'kysely'

// Marker kinds are modules (shared/kinds): the API's schemas decide which kinds exist, so a new kind needs no
// migration. The database keeps only that a kind is named.
export async function up(db: Kysely<unknown>): Promise<void> {
  const { rows } = await sql<{ conname: string }>`
    select conname from pg_constraint
    where conrelid = 'markers'::regclass and contype = 'c' and pg_get_constraintdef(oid) like '%kind%'
  `.execute(db)
  for (const { conname } of rows) await sql`alter table markers drop constraint ${sql.id(conname)}`.execute(db)
  await sql`alter table markers add constraint markers_kind_named check (kind ~ '^[a-z][a-z-]{0,39}$')`.execute(db)
}

export async function down(db: Kysely<unknown>): Promise<void> {
  await sql`alter table markers drop constraint markers_kind_named`.execute(db)
  await sql`alter table markers add constraint markers_kind_check check (kind in ('distance', 'angle', 'section', 'clearance'))`.execute(db)
}
