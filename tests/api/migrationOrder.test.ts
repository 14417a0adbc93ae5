// Migrations landing out of name order (a branch merged after a later-named migration already ran on a
// database) are applied, not refused: Kysely's Migrator with allowUnorderedMigrations (its documented option).
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, expect, it } from 'vitest'
import { createDb, createPool } from '../../server/db'
import { migrateToLatest } from '../../server/db/migrate'
import { createTestDatabase } from '../utils/db'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-migrations-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

const migration = (table: string) => `export async function up(db) { await db.schema.createTable('${table}').addColumn('id', 'integer').execute() }\nexport async function down(db) { await db.schema.dropTable('${table}').execute() }\n`

it('applies a migration named before one that already ran', async () => {
  const target = await createTestDatabase('template1')
  const db = createDb(createPool(target.url))
  try {
    fs.writeFileSync(path.join(dir, '20990101000000_first.js'), migration('first_t'))
    fs.writeFileSync(path.join(dir, '20990103000000_third.js'), migration('third_t'))
    expect(await migrateToLatest(db, dir)).toEqual(['20990101000000_first', '20990103000000_third'])
    // A branch lands with a migration named between the two.
    fs.writeFileSync(path.join(dir, '20990102000000_second.js'), migration('second_t'))
    expect(await migrateToLatest(db, dir)).toEqual(['20990102000000_second'])
    const tables = await db.introspection.getTables()
    expect(tables.map((t) => t.name).filter((n) => n.endsWith('_t')).sort()).toEqual(['first_t', 'second_t', 'third_t'])
  } finally {
    await db.destroy()
    await target.drop()
  }
})
