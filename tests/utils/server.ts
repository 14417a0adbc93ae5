import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import pino from 'pino'
import supertest from 'supertest'
import { loadConfig, type Config } from '../../server/config'
import { SpanmarkServer } from '../../server/runtime'
import { listDevMail } from '../../server/repositories/mail'
import { createTestDatabase } from './db'

export interface TestServer {
  server: SpanmarkServer
  url: string
  config: Config
  /** A supertest agent that keeps cookies and sends this server's Origin, as the browser page would. */
  agent(): ReturnType<typeof supertest.agent>
  /** Waits for a message to `to` in the fake SMTP server's mailbox. */
  waitForMail(to: string, since?: Date): Promise<{ subject: string; text: string; links: string[] }>
  stop(): Promise<void>
}

/**
 * Silent, unless TEST_SERVER_LOG names a level: then each test server logs to tests/output/server-<pid>-<n>.log
 * (a contributor chasing a failure reads what the server did meanwhile).
 */
let logged = 0
function defaultLog(): pino.Logger {
  const level = process.env.TEST_SERVER_LOG
  if (!level) return pino({ level: 'silent' })
  const dir = path.join(process.cwd(), 'tests', 'output')
  fs.mkdirSync(dir, { recursive: true })
  return pino({ level }, pino.destination({ dest: path.join(dir, `server-${process.pid}-${++logged}.log`), sync: true }))
}

/**
 * The real server (real PostgreSQL, real fake SMTP) on port 0 with a database of its own. `log`: a logger
 * of the test's own (to read what the server logs); see defaultLog otherwise.
 */
export async function startTestServer(overrides: Partial<Config> = {}, env: NodeJS.ProcessEnv = {}, log: pino.Logger = defaultLog()): Promise<TestServer> {
  const database = await createTestDatabase()
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-data-'))
  const config = {
    ...loadConfig({
      SPANMARK_ENV: 'test',
      DATABASE_URL: database.url,
      PORT: '0',
      SMTP_PORT: '0',
      MAIL_FAKE: '1',
      S3_FAKE: '1',
      S3_FAKE_PORT: '0',
      DATA_DIR: dataDir,
      // Only the suites that process scans start the ingest worker process.
      WORKER: 'none',
      ...env,
    }),
    ...overrides,
  }
  const server = await SpanmarkServer.start(config, log)
  const url = server.url
  return {
    server,
    url,
    config,
    agent: () => supertest.agent(url).set('Origin', url),
    async waitForMail(to, since = new Date(0)) {
      const deadline = Date.now() + 10_000
      for (;;) {
        await server.services.mailer.flush()
        const rows = await listDevMail(server.services.db)
        const hit = rows.find((r) => r.to_addresses.includes(to) && r.received_at >= since)
        if (hit) return { subject: hit.subject, text: hit.text_body, links: hit.text_body.match(/https?:\/\/\S+/g) ?? [] }
        if (Date.now() > deadline) throw new Error(`no mail to ${to} within 10 s`)
        await new Promise((r) => setTimeout(r, 50))
      }
    },
    async stop() {
      await server.stop()
      await database.drop()
      fs.rmSync(dataDir, { recursive: true, force: true })
    },
  }
}

let counter = 0
/** Signs up a new person through the API and returns a signed-in agent. */
export async function signUpAgent(t: TestServer, name = 'Test Person') {
  const email = `person${++counter}-${process.pid}-${Date.now()}@spanmark.example`
  const password = 'correct horse battery'
  const agent = t.agent()
  const res = await agent.post('/api/auth/sign-up').send({ email, password, name })
  if (res.status !== 201) throw new Error(`sign-up failed: ${res.status} ${JSON.stringify(res.body)}`)
  return { agent, email, password, user: res.body.user as { id: string; email: string; name: string } }
}

/** The one-time token of an e-mailed link: it rides in the URL fragment (`#token=...`). */
export function tokenOf(link: string): string {
  const token = new URLSearchParams(new URL(link).hash.slice(1)).get('token')
  if (!token) throw new Error(`no #token= in ${link}`)
  return token
}

/**
 * Sends a viewing pass from `owner` to `email` and opens it as a guest's browser would (the token from
 * the e-mail swapped for the guest session cookie). Returns the guest's agent and the pass.
 */
export async function guestAgent(
  t: TestServer,
  owner: ReturnType<TestServer['agent']>,
  projectId: string,
  email = `guest${++counter}-${process.pid}@spanmark.example`,
  /** More fields of the pass (`allowDownload`, `days`). */
  extra: Record<string, unknown> = {},
) {
  const since = new Date()
  const created = await owner.post(`/api/projects/${projectId}/passes`).send({ email, name: 'Gale Guest', ...extra })
  if (created.status !== 201) throw new Error(`pass not issued: ${created.status} ${JSON.stringify(created.body)}`)
  const mail = await t.waitForMail(email, since)
  const link = mail.links.find((l) => l.includes('/passes/open#token='))
  if (!link) throw new Error(`no pass link in: ${mail.text}`)
  const agent = t.agent()
  const opened = await agent.post('/api/passes/open').send({ token: tokenOf(link) })
  if (opened.status !== 200) throw new Error(`pass not opened: ${opened.status} ${JSON.stringify(opened.body)}`)
  return { agent, pass: created.body.pass as { id: string; projectId: string }, token: tokenOf(link), cookie: String(opened.headers['set-cookie']![0]).split(';')[0]! }
}
