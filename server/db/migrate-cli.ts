// `npm run migrate`: applies pending migrations to DATABASE_URL.
import { createDb, createPool } from './index'
import { migrateToLatest } from './migrate'

const url = process.env.DATABASE_URL
if (!url) {
  console.error('DATABASE_URL is not set')
  process.exit(1)
}
const pool = createPool(url)
const db = createDb(pool)
try {
  const applied = await migrateToLatest(db)
  console.log(applied.length ? `applied: ${applied.join(', ')}` : 'nothing to apply')
} finally {
  await db.destroy()
}
