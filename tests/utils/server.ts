import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { sql } from 'kysely'
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

/** What a test server starts from, when not an empty database: a template database and a data folder to copy. */
export interface StartFrom {
  template?: string
  dataDir?: string
}

/**
 * The real server (real PostgreSQL, real fake SMTP) on port 0 with a database of its own. `log`: a logger
 * of the test's own (to read what the server logs); see defaultLog otherwise. `from`: a copy of a prepared
 * database and data folder instead of an empty one (the browser tests' processed demo, tests/utils/demoScene.ts).
 */
export async function startTestServer(overrides: Partial<Config> = {}, env: NodeJS.ProcessEnv = {}, log: pino.Logger = defaultLog(), from: StartFrom = {}): Promise<TestServer> {
  const database = await createTestDatabase(from.template)
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-data-'))
  if (from.dataDir) fs.cpSync(from.dataDir, dataDir, { recursive: true })
  const config = {
    ...loadConfig({
      SPANMARK_ENV: 'test',
      DATABASE_URL: database.url,
      PORT: '0',
      SMTP_PORT: '0',
      MAIL_FAKE: '1',
      // e2e flows read links on the /dev/mail page; a test of the defaults sets it to '0'.
      SPANMARK_DEV_MAILBOX: '1',
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

/**
 * A second server process's worth of Spanmark on the same database as `t` (its own HTTP server, live
 * documents, fan-out listener and fakes): what several processes behind one proxy share is PostgreSQL.
 */
export async function startPeer(t: TestServer, log: pino.Logger = defaultLog(), overrides: Partial<Config> = {}): Promise<{ server: SpanmarkServer; url: string; agent(): ReturnType<typeof supertest.agent>; stop(): Promise<void> }> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-data-'))
  const server = await SpanmarkServer.start({ ...t.config, port: 0, dataDir, seedDemo: false, ...overrides }, log)
  const url = server.url
  return {
    server,
    url,
    agent: () => supertest.agent(url).set('Origin', url),
    async stop() {
      await server.stop()
      fs.rmSync(dataDir, { recursive: true, force: true })
    },
  }
}

let counter = 0
/**
 * Signs up a new person through the API as a browser would: sign-up (202, no session), then the
 * confirmation link from the e-mail, which confirms the address and signs in. Returns the signed-in agent.
 * `confirm: false` stops before the link (the account is signed in by password, still unconfirmed).
 */
export async function signUpAgent(t: TestServer, name = 'Test Person', options: { confirm?: boolean } = {}) {
  const email = `person${++counter}-${process.pid}-${Date.now()}@spanmark.example`
  return signUpAs(t, email, name, options)
}

/** signUpAgent with an address of the test's choosing (an invited one, say). */
export async function signUpAs(t: TestServer, email: string, name = 'Test Person', options: { confirm?: boolean } = {}) {
  const password = 'correct horse battery'
  const agent = t.agent()
  const since = new Date()
  const res = await agent.post('/api/auth/sign-up').send({ email, password, name })
  if (res.status !== 202) throw new Error(`sign-up failed: ${res.status} ${JSON.stringify(res.body)}`)
  let user: { id: string; email: string; name: string; emailConfirmed: boolean }
  if (options.confirm === false) {
    const signedIn = await agent.post('/api/auth/sign-in').send({ email, password })
    if (signedIn.status !== 200) throw new Error(`sign-in failed: ${signedIn.status} ${JSON.stringify(signedIn.body)}`)
    user = signedIn.body.user
  } else {
    const confirmed = await agent.post('/api/auth/confirm-email').send({ token: tokenOf(await confirmationLink(t, email, since)) })
    if (confirmed.status !== 200) throw new Error(`confirmation failed: ${confirmed.status} ${JSON.stringify(confirmed.body)}`)
    user = confirmed.body.user
  }
  await settleMail(t, email)
  return { agent, email, password, user }
}

/**
 * The link containing `marker` in a mail to `email` queued since `since`, read from the outbox (the mail is
 * queued in the same transaction as the request that sent it), so helpers need not wait for delivery and
 * work on a test server whose mail server is down on purpose; from the mailbox if it went out meanwhile.
 */
async function mailedLink(t: TestServer, email: string, since: Date, marker: string): Promise<string> {
  const rows = await t.server.services.db.selectFrom('mail_outbox').select('text_body').where('to_address', '=', email).where('created_at', '>=', since).orderBy('created_at', 'desc').execute()
  const queued = rows.flatMap((r) => r.text_body.match(/https?:\/\/\S+/g) ?? []).find((l) => l.includes(marker))
  if (queued) return queued
  // Sent meanwhile (a sent row keeps no body): the fake SMTP's mailbox has it.
  if (t.config.mail.fake) {
    const mail = await t.waitForMail(email, since)
    const link = mail.links.find((l) => l.includes(marker))
    if (link) return link
  }
  throw new Error(`no ${marker} link mailed to ${email} since ${since.toISOString()}`)
}

/** The address confirmation link mailed to `email` since `since`. */
export function confirmationLink(t: TestServer, email: string, since = new Date(0)): Promise<string> {
  return mailedLink(t, email, since, '/confirm-email#token=')
}

/**
 * Makes `person` a member with `role` the only way there is: `owner` invites their address, and they
 * accept the e-mailed invitation.
 */
export async function joinProject(
  t: TestServer,
  owner: ReturnType<TestServer['agent']>,
  projectId: string,
  person: { agent: ReturnType<TestServer['agent']>; email: string },
  role: 'owner' | 'measurer' | 'mentor',
): Promise<void> {
  const since = new Date()
  // Invitations carry measurer or mentor; an owner is invited as measurer and then promoted.
  const invited = await owner.post(`/api/projects/${projectId}/invites`).send({ email: person.email, role: role === 'owner' ? 'measurer' : role })
  if (invited.status !== 201) throw new Error(`invitation not sent: ${invited.status} ${JSON.stringify(invited.body)}`)
  const link = await mailedLink(t, person.email, since, '/invites/accept#token=')
  const accepted = await person.agent.post('/api/invites/accept').send({ token: tokenOf(link) })
  if (accepted.status !== 200) throw new Error(`invitation not accepted: ${accepted.status} ${JSON.stringify(accepted.body)}`)
  if (role === 'owner') {
    const me = await person.agent.get('/api/me')
    const promoted = await owner.patch(`/api/projects/${projectId}/members/${me.body.user.id}`).send({ role: 'owner' })
    if (promoted.status !== 200) throw new Error(`not promoted: ${promoted.status} ${JSON.stringify(promoted.body)}`)
  }
  await settleMail(t, person.email)
}

/**
 * The helpers read their links from the outbox; their mails must not arrive later and be taken by a test's
 * waitForMail(email, since) for the mail it waits for. Unclaimed ones are marked sent (never delivered: cheap);
 * one a sender has claimed already is waited for.
 */
async function settleMail(t: TestServer, email: string): Promise<void> {
  const db = t.server.services.db
  await db
    .updateTable('mail_outbox')
    .set({ sent_at: new Date(), text_body: '', html_body: null })
    .where('to_address', '=', email)
    .where('sent_at', 'is', null)
    .where('next_attempt_at', '<=', sql<Date>`now()`)
    .execute()
  const inFlight = await db.selectFrom('mail_outbox').select('id').where('to_address', '=', email).where('sent_at', 'is', null).executeTakeFirst()
  if (inFlight && t.config.mail.fake) await t.server.services.mailer.flush()
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
  // Read from the outbox (queued with the pass), as the sign-up helpers do: no wait for delivery.
  const link = await mailedLink(t, email, since, '/passes/open#token=')
  await settleMail(t, email)
  const agent = t.agent()
  const opened = await agent.post('/api/passes/open').send({ token: tokenOf(link) })
  if (opened.status !== 200) throw new Error(`pass not opened: ${opened.status} ${JSON.stringify(opened.body)}`)
  return { agent, pass: created.body.pass as { id: string; projectId: string }, token: tokenOf(link), cookie: String(opened.headers['set-cookie']![0]).split(';')[0]! }
}
