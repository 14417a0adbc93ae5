import { sql, type Kysely } from 'kysely'

// Workers that cannot collide: each claim of a scan gets an id, and a scan's tiles carry the claim that made
// them, tied to the scan's current claim by a foreign key. A new claim moves existing tiles to itself (to be
// deleted by the new worker) and a stale worker's late tile writes fail the key; its scan writes are made
// conditional on its claim in the code.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('scans').addColumn('claim_id', 'uuid').execute()
  await sql`update scans set claim_id = gen_random_uuid() where claim_id is null`.execute(db)
  await sql`alter table scans add constraint scans_id_claim unique (id, claim_id)`.execute(db)
  await db.schema.alterTable('scan_tiles').addColumn('claim_id', 'uuid').execute()
  await sql`update scan_tiles t set claim_id = s.claim_id from scans s where s.id = t.scan_id`.execute(db)
  await sql`alter table scan_tiles alter column claim_id set not null`.execute(db)
  await sql`
    alter table scan_tiles add constraint scan_tiles_claim foreign key (scan_id, claim_id)
    references scans (id, claim_id) on update cascade on delete cascade`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`alter table scan_tiles drop constraint scan_tiles_claim`.execute(db)
  await db.schema.alterTable('scan_tiles').dropColumn('claim_id').execute()
  await sql`alter table scans drop constraint scans_id_claim`.execute(db)
  await db.schema.alterTable('scans').dropColumn('claim_id').execute()
}
