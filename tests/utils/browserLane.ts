import { afterAll } from 'vitest'
import pg from 'pg'

/**
 * One browser file at a time: the browser files (tests/e2e) each run a server, its ingest worker and Chromium
 * drawing with a software renderer, and their live timings assume a machine not shared with another such file.
 * Imported first by every browser file: at load (before its hooks, so no hook timeout runs while it waits) the
 * file takes a PostgreSQL advisory lock on the run's cluster and holds it until its tests end (or its process
 * does). The API and unit files run beside it in the other workers (vitest.config.ts, tests/utils/sequencer.ts).
 */
const admin = process.env.TEST_DATABASE_ADMIN_URL
if (admin) {
  const client = new pg.Client({ connectionString: admin })
  await client.connect()
  await client.query("SELECT pg_advisory_lock(hashtext('spanmark_browser_lane'))")
  afterAll(async () => {
    await client.query("SELECT pg_advisory_unlock(hashtext('spanmark_browser_lane'))").catch(() => {})
    await client.end().catch(() => {})
  })
}
