import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import pg from 'pg'
import type { Browser } from 'playwright-core'
import type { Scene } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { seedDemoGuest } from '../../server/demo/seed'
import { launchBrowser } from './browser'
import { adminUrl } from './db'
import { waitForScan } from './scans'
import { startTestServer, type TestServer } from './server'

/** The demo, seeded and its scans processed once per run, that each browser test file starts a copy of. */
export const DEMO_TEMPLATE_DB = 'spanmark_demo_template'

/** Where the processed demo's data folder (the fake object storage's files) waits for the copies; one per cluster. */
export function demoTemplateDir(): string {
  return path.join(os.tmpdir(), `spanmark-demo-template-${new URL(adminUrl()).port}`)
}

type Agent = ReturnType<TestServer['agent']>

async function signInDemo(t: TestServer): Promise<{ agent: Agent; projectId: string; scene: Scene }> {
  const agent = t.agent()
  await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS[1]!.email, password: DEMO_PASSWORD }).expect(200)
  const projectId = (await agent.get('/api/projects').expect(200)).body.projects[0].id as string
  const sceneId = (await agent.get(`/api/projects/${projectId}/scenes`).expect(200)).body.scenes[0].id as string
  const scene = (await agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene as Scene
  return { agent, projectId, scene }
}

/**
 * Seeds the demo and processes its scans once per run (the slow part: the ingest), under an advisory lock so
 * that the files running side by side wait for the first: a server seeds, its scans and first marker checks
 * finish, the guest's pass (whose e-mailed link names this server's address) is taken out again, and the
 * stopped server's database becomes the template DEMO_TEMPLATE_DB, its data folder demoTemplateDir().
 */
async function ensureDemoTemplate(): Promise<void> {
  const admin = new pg.Client({ connectionString: adminUrl() })
  await admin.connect()
  try {
    await admin.query('SELECT pg_advisory_lock(hashtext($1))', [DEMO_TEMPLATE_DB])
    const exists = await admin.query('SELECT 1 FROM pg_database WHERE datname = $1', [DEMO_TEMPLATE_DB])
    if (exists.rowCount) return
    const t = await startTestServer({ seedDemo: true }, { WORKER: 'spawn' })
    const { agent, scene } = await signInDemo(t)
    for (const i of scene.instances) await waitForScan(agent, i.scanId, undefined, 100_000, 200)
    const db = t.server.services.db
    const deadline = Date.now() + 60_000
    while ((await db.selectFrom('markers').select('id').where('check_state', '=', 'pending').execute()).length && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100))
    await t.server.stop()
    const name = new URL(t.config.databaseUrl).pathname.slice(1)
    // Out of the copy: the demo guest's pass and its mail (each copy sends them afresh with its own address),
    // and the sessions of this server.
    const c = new pg.Client({ connectionString: t.config.databaseUrl })
    await c.connect()
    await c.query('DELETE FROM guest_links; DELETE FROM mail_outbox; DELETE FROM dev_mail; DELETE FROM sessions')
    await c.end()
    fs.rmSync(demoTemplateDir(), { recursive: true, force: true })
    fs.cpSync(t.config.dataDir, demoTemplateDir(), { recursive: true })
    await admin.query(`ALTER DATABASE ${name} RENAME TO ${DEMO_TEMPLATE_DB}`)
    fs.rmSync(t.config.dataDir, { recursive: true, force: true })
  } finally {
    await admin.query('SELECT pg_advisory_unlock(hashtext($1))', [DEMO_TEMPLATE_DB]).catch(() => {})
    await admin.end()
  }
}

/**
 * A server with the seeded demo, its scans processed, and Chromium: what the browser tests start from. Each
 * file gets a demo of its own (a copy of the run's processed demo: database and data folder), so a file may
 * write to it freely; the demo guest's pass is sent again as a seeding start sends it.
 */
export async function startDemoScene(): Promise<{ t: TestServer; browser: Browser; scene: Scene; projectId: string }> {
  if (!fs.existsSync('dist/index.html')) throw new Error('browser tests need the client build: run them through `npm test`')
  await ensureDemoTemplate()
  const t = await startTestServer({}, { WORKER: 'spawn' }, undefined, { template: DEMO_TEMPLATE_DB, dataDir: demoTemplateDir() })
  await seedDemoGuest(t.server.services)
  const browser = await launchBrowser()
  const { agent, scene, projectId } = await signInDemo(t)
  for (const i of scene.instances) await waitForScan(agent, i.scanId, undefined, 100_000, 200)
  return { t, browser, scene, projectId }
}
