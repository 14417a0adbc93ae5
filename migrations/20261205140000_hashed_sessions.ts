import { sql, type Kysely } from 'kysely'

// Session ids are kept as their SHA-256 (hex), like every other secret: rewrite the ids already stored so
// the people signed in stay signed in (the cookie keeps the id; the server hashes it to find the row).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`update sessions set id = encode(sha256(convert_to(id, 'UTF8')), 'hex')`.execute(db)
}

// A hash cannot be turned back into its id: going down signs everybody out.
export async function down(db: Kysely<any>): Promise<void> {
  await db.deleteFrom('sessions').execute()
}
