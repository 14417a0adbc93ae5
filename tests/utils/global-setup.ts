import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import pg from 'pg'
import { createDb, createPool } from '../../server/db'
import { migrateToLatest } from '../../server/db/migrate'

export const TEMPLATE_DB = 'spanmark_template'
/** Kept in step with tests/utils/demoScene.ts (not imported: that module loads the browser driver). */
const DEMO_TEMPLATE_DB = 'spanmark_demo_template'

/**
 * Migrates one template database per run; each test file then clones it (CREATE DATABASE ... TEMPLATE),
 * which takes milliseconds and keeps files independent. Without TEST_DATABASE_ADMIN_URL (a unit-only run
 * outside `npm test`) nothing is prepared and database tests say so.
 */
export default async function setup(): Promise<(() => void) | undefined> {
  const admin = process.env.TEST_DATABASE_ADMIN_URL
  if (!admin) return undefined
  const client = new pg.Client({ connectionString: admin })
  await client.connect()
  // The processed demo of an earlier run (tests/utils/demoScene.ts) goes too: each run seeds its own.
  await client.query(`DROP DATABASE IF EXISTS ${DEMO_TEMPLATE_DB} WITH (FORCE)`)
  const demoDir = path.join(os.tmpdir(), `spanmark-demo-template-${new URL(admin).port}`)
  fs.rmSync(demoDir, { recursive: true, force: true })
  await client.query(`DROP DATABASE IF EXISTS ${TEMPLATE_DB} WITH (FORCE)`)
  await client.query(`CREATE DATABASE ${TEMPLATE_DB}`)
  await client.end()
  const url = new URL(admin)
  url.pathname = `/${TEMPLATE_DB}`
  const pool = createPool(url.toString())
  const db = createDb(pool)
  await migrateToLatest(db)
  await db.destroy()
  // The processed demo's data folder does not outlive the run (its database goes with the cluster).
  return () => fs.rmSync(demoDir, { recursive: true, force: true })
}
