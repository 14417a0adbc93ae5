// Comments on markers and their review (sign-off), through the API and the live record document, and the
// e-mail to a marker's author that gathers others' comments, delivered over real SMTP into dev_mail. The rules
// checked here are the product's own (server/markers/README.md, "Comments and review"; DEVELOPERS.md, "Roles and rights"): who may comment and review, never one's
// own marker, a note for "changes asked", no sign-off while the check is pending, and a signed-off marker back
// to open when its geometry or placement changes (common practice in review workflows, no source). Geometry:
// a box of known size (tests/utils/solids.ts), so that checks are real.
import net from 'node:net'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import pino from 'pino'
import { Matrix4 } from 'three'
import type { WebsocketProvider } from 'y-websocket'
import { RECORD_MAPS, WORK_MAPS, type LiveRecord } from '@shared/collab/documents'
import type { CommentThread, Marker, MarkerRevision } from '@shared/schemas'
import { startFakeSmtp } from '../../server/fakes/smtp'
import { listDevMail } from '../../server/repositories/mail'
import { liveClient, synced } from '../utils/live'
import { upload, waitForScan } from '../utils/scans'
import { guestAgent, joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { boxSolid } from '../utils/solids'

type Person = Awaited<ReturnType<typeof signUpAgent>>
let t: TestServer
let owner: Person, measurer: Person, mentor: Person, outsider: Person
/** A viewing pass's holder: no account, only the pass's cookie. */
let guest: { agent: Person['agent']; cookie: string }
let projectId: string
let sceneId: string
let boxPlacement: string
/** A placement of a scan with no stored points (written as ready by hand): its markers stay pending. */
let blankPlacement: string
const open: WebsocketProvider[] = []

// The box: 1.0 m (x) by 0.6 m (y) by 0.8 m (z), standing on z = 0, centred on x = y = 0.
const onTop = (x: number) => ({ instanceId: boxPlacement, x, y: 0, z: 0.8 })

async function post(body: object, who: Person = measurer): Promise<Marker> {
  const res = await who.agent.post(`/api/scenes/${sceneId}/markers`).send(body)
  if (res.status !== 201) throw new Error(`POST marker: ${res.status} ${JSON.stringify(res.body)}`)
  return res.body.marker
}
const topDistance = (who: Person = measurer, label = 'top edge') => post({ kind: 'distance', label, anchors: [onTop(-0.4), onTop(0.4)] }, who)
const getMarker = async (id: string): Promise<Marker> => (await owner.agent.get(`/api/markers/${id}`).expect(200)).body.marker
const history = async (id: string): Promise<MarkerRevision[]> => (await owner.agent.get(`/api/markers/${id}/history`).expect(200)).body.revisions
const review = (who: { agent: Person['agent'] }, id: string, body: object) => who.agent.put(`/api/markers/${id}/review`).send(body)
const comment = (who: { agent: Person['agent'] }, id: string, body: object) => who.agent.post(`/api/markers/${id}/comments`).send(body)

async function until<T>(probe: () => Promise<T | undefined | null | false> | T | undefined | null | false, ms = 10_000, what = 'condition'): Promise<T> {
  const end = Date.now() + ms
  for (;;) {
    const v = await probe()
    if (v) return v
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 40))
  }
}

async function cookieOf(p: Person | { cookie: string }): Promise<string> {
  if ('cookie' in p) return p.cookie
  const res = await supertest(t.url).post('/api/auth/sign-in').set('Origin', t.url).send({ email: p.email, password: p.password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}
async function live(p: Person | { cookie: string }, path: string) {
  const c = liveClient(t.url, await cookieOf(p), path)
  open.push(c.provider)
  await synced(c.provider)
  return c
}

/** A checked marker (the worker has processed the box). */
async function checked(m: Marker): Promise<Marker> {
  return until(async () => {
    const now = await getMarker(m.id)
    return now.check.state !== 'pending' ? now : null
  }, 30_000, `the check of ${m.label}`)
}

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Rhea Owner')
  measurer = await signUpAgent(t, 'Milo Measurer')
  mentor = await signUpAgent(t, 'Nadia Mentor')
  outsider = await signUpAgent(t, 'Olga Outsider')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Review' }).expect(201)).body.project.id
  for (const [p, role] of [[measurer, 'measurer'], [mentor, 'mentor']] as const) {
    await joinProject(t, owner.agent, projectId, p, role)
  }
  const pass = await guestAgent(t, owner.agent, projectId)
  guest = { agent: pass.agent, cookie: pass.cookie }
  const scanId = (await upload(owner.agent, projectId, boxSolid(1.0, 0.6, 0.8).ply(), 'box.ply').expect(202)).body.scan.id
  expect((await waitForScan(owner.agent, scanId, undefined, 120_000)).scan.status).toBe('ready')
  const blank = await t.server.services.db
    .insertInto('scans')
    .values({ project_id: projectId, name: 'no points', file_name: 'none.xyz', status: 'ready', size_bytes: 0, blob_key: 'none' })
    .returning('id')
    .executeTakeFirstOrThrow()
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Review scene' }).expect(201)).body.scene.id
  boxPlacement = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance.id
  blankPlacement = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: blank.id }).expect(201)).body.instance.id
}, 180_000)

afterAll(async () => {
  for (const p of open) p.destroy()
  await t?.stop()
})

describe('comments', () => {
  it('keeps threads: a first comment, replies in order, resolved and reopened as a whole', async () => {
    const m = await topDistance()
    const first = (await comment(mentor, m.id, { body: 'Which edge is this, the lid or the base?' }).expect(201)).body as { comment: { id: string }; thread: CommentThread }
    expect(first.thread).toMatchObject({ id: first.comment.id, resolved: null, comments: [{ threadId: null, author: { name: 'Nadia Mentor' }, body: 'Which edge is this, the lid or the base?' }] })
    await comment(measurer, m.id, { body: '  The lid, front edge.  ', threadId: first.thread.id }).expect(201)
    await comment(owner, m.id, { body: 'A second question: is the box level?' }).expect(201)
    const reply = (await comment(owner, m.id, { body: 'Fine by me.', threadId: first.thread.id }).expect(201)).body.comment
    const threads = (await guest.agent.get(`/api/markers/${m.id}/comments`).expect(200)).body.threads as CommentThread[]
    expect(threads.map((th) => th.comments.map((c) => [c.author?.name, c.body]))).toEqual([
      [
        ['Nadia Mentor', 'Which edge is this, the lid or the base?'],
        ['Milo Measurer', 'The lid, front edge.'],
        ['Rhea Owner', 'Fine by me.'],
      ],
      [['Rhea Owner', 'A second question: is the box level?']],
    ])
    expect(threads[0]!.comments.slice(1).every((c) => c.threadId === first.thread.id)).toBe(true)

    // Resolved by anyone who comments (a reply's id stands for its thread), reopened likewise.
    const resolved = (await measurer.agent.post(`/api/comments/${reply.id}/resolve`).expect(200)).body.thread as CommentThread
    expect(resolved).toMatchObject({ id: first.thread.id, resolved: { by: { name: 'Milo Measurer' } } })
    expect((await getMarker(m.id)).comments).toMatchObject({ threads: 2, open: 1, count: 4 })
    const reopened = (await mentor.agent.post(`/api/comments/${first.thread.id}/reopen`).expect(200)).body.thread as CommentThread
    expect(reopened.resolved).toBeNull()
    // A reply to a resolved thread opens it again.
    await owner.agent.post(`/api/comments/${first.thread.id}/resolve`).expect(200)
    const answered = (await comment(mentor, m.id, { body: 'One more thing.', threadId: first.thread.id }).expect(201)).body.thread as CommentThread
    expect(answered.resolved).toBeNull()
    expect(answered.comments).toHaveLength(4)
  })

  it('lets a guest read but not comment or resolve, and tells an outsider nothing', async () => {
    const m = await topDistance()
    const started = (await comment(mentor, m.id, { body: 'Checked against the drawing?' }).expect(201)).body.thread as CommentThread
    const refused = await comment(guest, m.id, { body: 'me too' }).expect(403)
    expect(refused.body.error.code).toBe('forbidden')
    await guest.agent.post(`/api/comments/${started.id}/resolve`).expect(403)
    expect((await guest.agent.get(`/api/markers/${m.id}/comments`).expect(200)).body.threads).toHaveLength(1)
    for (const res of [await outsider.agent.get(`/api/markers/${m.id}/comments`), await comment(outsider, m.id, { body: 'hello' }), await outsider.agent.post(`/api/comments/${started.id}/reopen`)]) {
      expect(res.status).toBe(404)
      expect(res.body.error.message).not.toMatch(/role|comment/i)
    }
    await t.agent().get(`/api/markers/${m.id}/comments`).expect(401)
  })

  it('names the field of a bad comment', async () => {
    const m = await topDistance()
    const other = await topDistance(measurer, 'another')
    const elsewhere = (await comment(mentor, other.id, { body: 'on the other marker' }).expect(201)).body.thread as CommentThread
    const cases: [object, string, RegExp][] = [
      [{}, 'body', /^body\.body: /],
      [{ body: '   ' }, 'body', /^body\.body: must not be empty/],
      [{ body: 'x'.repeat(4001) }, 'body', /^body\.body: must be at most 4000 characters/],
      [{ body: 42 }, 'body', /^body\.body: must be text/],
      [{ body: 'hi', threadId: 'not-a-uuid' }, 'threadId', /^body\.threadId: must be an id/],
      [{ body: 'hi', threadId: elsewhere.id }, 'threadId', /^body\.threadId: no comment thread with this id on this marker/],
    ]
    for (const [body, field, message] of cases) {
      const res = await comment(mentor, m.id, body).expect(400)
      expect(res.body.error, JSON.stringify(body)).toMatchObject({ code: 'invalid-input', field })
      expect(res.body.error.message).toMatch(message)
    }
    expect((await comment(mentor, m.id, { body: 'hi', extra: 1 }).expect(400)).body.error.message).toMatch(/^body/)
    expect((await comment(mentor, m.id, { body: 'x'.repeat(4000) }).expect(201)).body.comment.body).toHaveLength(4000)
    await mentor.agent.post('/api/comments/00000000-0000-4000-8000-00000000abcd/resolve').expect(404)
  })

  it('pages threads newest first, each page oldest first with its replies whole, until no earlier page is left', async () => {
    const m = await topDistance(measurer, 'paged threads')
    const started: string[] = []
    for (let i = 0; i < 5; i++) started.push((await comment(mentor, m.id, { body: `thread ${i}` }).expect(201)).body.thread.id)
    await comment(owner, m.id, { body: 'a reply in thread 1', threadId: started[1] }).expect(201)
    const pages: { threads: CommentThread[]; earlier: string | null }[] = []
    let before: string | null | undefined
    do {
      const res = await owner.agent.get(`/api/markers/${m.id}/comments`).query(before ? { limit: 2, before } : { limit: 2 }).expect(200)
      pages.push(res.body)
      before = res.body.earlier
    } while (before)
    expect(pages.map((p) => p.threads.map((th) => th.comments[0]!.body))).toEqual([['thread 3', 'thread 4'], ['thread 1', 'thread 2'], ['thread 0']])
    expect(pages[1]!.threads[0]!.comments.map((c) => c.body)).toEqual(['thread 1', 'a reply in thread 1'])
    // Without a limit: the default page (20) holds all five.
    expect((await owner.agent.get(`/api/markers/${m.id}/comments`).expect(200)).body).toMatchObject({ earlier: null, threads: { length: 5 } })
    const bad: [object, RegExp][] = [
      [{ limit: 0 }, /^query\.limit: must be at least 1/],
      [{ limit: 201 }, /^query\.limit: must be at most 200/],
      [{ limit: 'many' }, /^query\.limit: /],
      [{ before: 'nope' }, /^query\.before: must be an id/],
      [{ before: '00000000-0000-4000-8000-00000000abcd' }, /^query\.before: no comment thread with this id on this marker/],
    ]
    for (const [query, message] of bad) {
      const res = await owner.agent.get(`/api/markers/${m.id}/comments`).query(query).expect(400)
      expect(res.body.error.message, JSON.stringify(query)).toMatch(message)
    }
  })

  it('holds at most 500 replies in a thread and says to start a new one', async () => {
    const m = await topDistance(measurer, 'long thread')
    const first = (await comment(mentor, m.id, { body: 'start' }).expect(201)).body.thread as CommentThread
    const db = t.server.services.db
    const sceneOf = (await db.selectFrom('markers').select('scene_id').where('id', '=', m.id).executeTakeFirstOrThrow()).scene_id
    await db
      .insertInto('comments')
      .values(Array.from({ length: 499 }, (_, i) => ({ marker_id: m.id, scene_id: sceneOf, thread_id: first.id, author_id: null, body: `reply ${i}` })))
      .execute()
    await comment(owner, m.id, { body: 'the 500th', threadId: first.id }).expect(201)
    const res = await comment(owner, m.id, { body: 'one too many', threadId: first.id }).expect(409)
    expect(res.body.error.message).toMatch(/already has 500 replies.*start a new thread/)
    await comment(owner, m.id, { body: 'a new thread' }).expect(201)
  })

  it('writes each change into the marker’s record entry, so everyone in the scene sees it at once', async () => {
    const m = await topDistance()
    const reader = await live(guest, `${sceneId}/record`)
    const entry = () => reader.doc.getMap<LiveRecord>(RECORD_MAPS.markers).get(m.id)
    await until(() => entry(), 5000, 'the record entry')
    const startedAt = Date.now()
    const made = (await comment(mentor, m.id, { body: 'Seen live?' }).expect(201)).body.thread as CommentThread
    await until(() => entry()?.comments?.count === 1, 1000, 'the comment in the record entry')
    expect(Date.now() - startedAt).toBeLessThan(1000)
    expect(entry()!.comments).toMatchObject({ threads: 1, open: 1, lastAt: made.comments[0]!.createdAt })
    await measurer.agent.post(`/api/comments/${made.id}/resolve`).expect(200)
    await until(() => entry()?.comments?.open === 0, 1000, 'the resolution in the record entry')
  })
})

describe('the author’s e-mail', () => {
  // Comment notices only: the author also got their address confirmation and their invitation.
  const mailTo = async (email: string) => (await listDevMail(t.server.services.db)).filter((r) => r.to_addresses.includes(email) && /comment/i.test(r.subject))
  const gap = () => t.config.commentMail.gapMs
  const settle = () => new Promise((r) => setTimeout(r, gap() + 4 * t.config.commentMail.sweepMs + 300))

  it('gathers others’ comments within the gap into one message to the author, and none about their own', async () => {
    const author = await signUpAgent(t, 'Ada Author')
    await joinProject(t, owner.agent, projectId, author, 'measurer')
    const door = await topDistance(author, 'lid width')
    const base = await post({ kind: 'distance', label: 'base width', anchors: [{ instanceId: boxPlacement, x: -0.4, y: -0.3, z: 0.1 }, { instanceId: boxPlacement, x: 0.4, y: -0.3, z: 0.1 }] }, author)
    // The author's own comment tells nobody; the mentor's two, on two markers, come in one message.
    await comment(author, door.id, { body: 'Note to self: re-pick after lunch.' }).expect(201)
    const asked = (await comment(mentor, door.id, { body: 'Please pick the lid edge, not the hinge.' }).expect(201)).body.thread as CommentThread
    await comment(owner, base.id, { body: 'Base width agrees with the crate list.' }).expect(201)
    await comment(author, door.id, { body: 'Done, re-picked.', threadId: asked.id }).expect(201)
    const [mail] = await until(async () => {
      const rows = await mailTo(author.email)
      return rows.length > 0 ? rows : null
    }, 15_000, 'the digest')
    await settle()
    const all = await mailTo(author.email)
    expect(all).toHaveLength(1)
    expect(mail!.subject).toBe('2 new comments on 2 of your markers')
    const text = mail!.text_body
    expect(text).toContain('Hello Ada Author')
    expect(text).toContain('“lid width” in the scene “Review scene” (Review)')
    expect(text).toContain('Nadia Mentor')
    expect(text).toContain('Please pick the lid edge, not the hinge.')
    expect(text).toContain('Rhea Owner')
    expect(text).toContain('Base width agrees with the crate list.')
    expect(text).not.toContain('Note to self')
    expect(text).not.toContain('Done, re-picked')
    expect(text).toContain(`${t.url}/projects/${projectId}/scenes/${sceneId}?marker=${door.id}`)
    expect(mail!.html_body).toContain('Please pick the lid edge, not the hinge.')
    // Nobody else was mailed about these comments.
    expect(await mailTo(mentor.email)).toHaveLength(0)
    expect(await mailTo(owner.email)).toHaveLength(0)

    // A comment after that message waits a whole gap again: at most one message per gap.
    await comment(mentor, base.id, { body: 'And the height?' }).expect(201)
    const second = await until(async () => {
      const rows = await mailTo(author.email)
      return rows.length > 1 ? rows.find((r) => r.id !== mail!.id) : null
    }, 15_000, 'the second message')
    expect(second.received_at.getTime() - mail!.received_at.getTime()).toBeGreaterThanOrEqual(gap() - 50)
    expect(second.subject).toBe('Nadia Mentor commented on “base width”')
    expect(second.text_body).toContain('And the height?')
    expect(second.text_body).not.toContain('Please pick the lid edge')
  }, 60_000)

  it('mails nobody when the author comments on their own marker', async () => {
    const m = await topDistance(measurer, 'own thoughts')
    const before = (await mailTo(measurer.email)).length
    await comment(measurer, m.id, { body: 'Thinking aloud.' }).expect(201)
    await settle()
    expect((await mailTo(measurer.email)).length).toBe(before)
  })
})

describe('an SMTP outage', () => {
  it('loses no comment e-mail: it waits in the outbox and goes once the mail server is back', async () => {
    // A port with nothing listening: the mail server is down.
    const port = await new Promise<number>((resolve) => {
      const probe = net.createServer().listen(0, '127.0.0.1', () => {
        const p = (probe.address() as net.AddressInfo).port
        probe.close(() => resolve(p))
      })
    })
    const down = await startTestServer({}, { MAIL_FAKE: '0', SMTP_PORT: String(port) })
    try {
      const author = await signUpAgent(down, 'Outage Author')
      const critic = await signUpAgent(down, 'Outage Mentor')
      const pid = (await author.agent.post('/api/projects').send({ name: 'Outage' }).expect(201)).body.project.id
      await joinProject(down, author.agent, pid, critic, 'mentor')
      const scan = await upload(author.agent, pid, Buffer.from('0 0 0\n1 0 0\n'), 'two.xyz').expect(202)
      await down.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
      const sid = (await author.agent.post(`/api/projects/${pid}/scenes`).send({ name: 'Outage scene' }).expect(201)).body.scene.id
      const iid = (await author.agent.post(`/api/scenes/${sid}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id
      const m = (await author.agent.post(`/api/scenes/${sid}/markers`).send({ kind: 'distance', anchors: [{ instanceId: iid, x: 0, y: 0, z: 0 }, { instanceId: iid, x: 1, y: 0, z: 0 }] }).expect(201)).body.marker
      await critic.agent.post(`/api/markers/${m.id}/comments`).send({ body: 'Written while the mail server is down.' }).expect(201)
      const db = down.server.services.db
      // The job moved the notice into the outbox; the send failed and is to be retried.
      const waiting = await until(async () => {
        // The comment notice (the author's confirmation and invitation mails wait in the outbox too).
        const row = await db.selectFrom('mail_outbox').selectAll().where('to_address', '=', author.email).where('subject', 'ilike', '%comment%').executeTakeFirst()
        return row && row.attempts > 0 ? row : null
      }, 15_000, 'a failed attempt')
      expect(waiting.sent_at).toBeNull()
      expect(waiting.last_error).toBeTruthy()
      expect(waiting.text_body).toContain('Written while the mail server is down.')
      expect((await db.selectFrom('comment_notices').select('mailed_at').execute()).every((n) => n.mailed_at !== null)).toBe(true)
      expect(await listDevMail(db)).toHaveLength(0)
      // The mail server comes back on its port; the retry delivers the message once.
      const smtp = await startFakeSmtp(db, { host: '127.0.0.1', port, log: pino({ level: 'silent' }) })
      try {
        const delivered = await until(async () => {
          await down.server.services.mailer.flush()
          const rows = (await listDevMail(db)).filter((r) => r.to_addresses.includes(author.email) && /comment/i.test(r.subject))
          return rows.length > 0 ? rows : null
        }, 40_000, 'delivery after the outage')
        expect(delivered).toHaveLength(1)
        expect(delivered[0]!.text_body).toContain('Written while the mail server is down.')
        const sent = await db.selectFrom('mail_outbox').selectAll().where('id', '=', waiting.id).executeTakeFirstOrThrow()
        expect(sent.sent_at).not.toBeNull()
      } finally {
        await smtp.close()
      }
    } finally {
      await down.stop()
    }
  }, 90_000)
})

describe('review', () => {
  it('lets a mentor sign off a checked marker, recorded in the history and the record document', async () => {
    const m = await checked(await topDistance())
    expect(m.check.state).toBe('checked')
    // The box's top is 1.0 m long; the anchors were 0.8 m apart along it.
    expect(Math.abs(m.check.value! - 0.8)).toBeLessThan(0.02)
    expect(m.review).toEqual({ state: 'open', by: null, at: null, note: null })
    const reader = await live(guest, `${sceneId}/record`)
    const signed = (await review(mentor, m.id, { state: 'signed-off' }).expect(200)).body.marker as Marker
    expect(signed.review).toMatchObject({ state: 'signed-off', by: { id: mentor.user.id, name: 'Nadia Mentor' }, note: null })
    expect(Date.parse(signed.review.at!)).toBeGreaterThan(Date.now() - 60_000)
    expect((await getMarker(m.id)).review.state).toBe('signed-off')
    const last = (await history(m.id)).at(-1)!
    expect(last).toMatchObject({ action: 'reviewed', reviewState: 'signed-off', by: { name: 'Nadia Mentor' }, note: null })
    await until(() => reader.doc.getMap<LiveRecord>(RECORD_MAPS.markers).get(m.id)?.review?.state === 'signed-off', 2000, 'the sign-off in the record')
    // Signing off again changes nothing and records nothing.
    const count = (await history(m.id)).length
    await review(mentor, m.id, { state: 'signed-off' }).expect(200)
    expect(await history(m.id)).toHaveLength(count)
  })

  it('asks for changes only with a note, and goes back to open', async () => {
    const m = await checked(await topDistance())
    for (const body of [{ state: 'changes-asked' }, { state: 'changes-asked', note: '   ' }]) {
      const res = await review(owner, m.id, body).expect(400)
      expect(res.body.error).toMatchObject({ code: 'invalid-input', field: 'note' })
      expect(res.body.error.message).toMatch(/^body\.note: .*note is required when asking for changes/)
    }
    const bad = await review(owner, m.id, { state: 'approved' }).expect(400)
    expect(bad.body.error).toMatchObject({ field: 'state' })
    expect(bad.body.error.message).toMatch(/^body\.state: must be one of open, changes-asked, signed-off/)
    expect((await review(owner, m.id, { state: 'open', note: 'x'.repeat(2001) }).expect(400)).body.error.field).toBe('note')
    const asked = (await review(owner, m.id, { state: 'changes-asked', note: 'Pick the lid edge at the corners.' }).expect(200)).body.marker as Marker
    expect(asked.review).toMatchObject({ state: 'changes-asked', by: { name: 'Rhea Owner' }, note: 'Pick the lid edge at the corners.' })
    const back = (await review(mentor, m.id, { state: 'open' }).expect(200)).body.marker as Marker
    expect(back.review).toMatchObject({ state: 'open', by: { name: 'Nadia Mentor' }, note: null })
    expect((await history(m.id)).filter((r) => r.action === 'reviewed').map((r) => [r.reviewState, r.note])).toEqual([
      ['changes-asked', 'Pick the lid edge at the corners.'],
      ['open', null],
    ])
  })

  it('never on one’s own marker, and only for mentors and owners', async () => {
    const own = await checked(await topDistance(owner, 'owner’s own'))
    const res = await review(owner, own.id, { state: 'signed-off' }).expect(403)
    expect(res.body.error).toMatchObject({ code: 'forbidden' })
    expect(res.body.error.message).toMatch(/You placed this marker, so you cannot review it/)
    await review(owner, own.id, { state: 'changes-asked', note: 'hm' }).expect(403)
    const theirs = await checked(await topDistance())
    expect((await review(measurer, theirs.id, { state: 'signed-off' }).expect(403)).body.error.message).toMatch(/role/)
    expect((await review(guest, theirs.id, { state: 'signed-off' }).expect(403)).body.error.message).toMatch(/viewing pass .* changes nothing/)
    expect((await review(outsider, theirs.id, { state: 'signed-off' })).status).toBe(404)
    expect((await getMarker(own.id)).review.state).toBe('open')
    expect((await review(mentor, own.id, { state: 'signed-off' }).expect(200)).body.marker.review.state).toBe('signed-off')
  })

  it('refuses a sign-off while the check is pending, and says why', async () => {
    const m = await post({ kind: 'distance', label: 'on a scan without points', anchors: [{ instanceId: blankPlacement, x: 0, y: 0, z: 0 }, { instanceId: blankPlacement, x: 1, y: 0, z: 0 }] })
    expect((await getMarker(m.id)).check.state).toBe('pending')
    const res = await review(mentor, m.id, { state: 'signed-off' }).expect(409)
    expect(res.body.error.code).toBe('conflict')
    expect(res.body.error.message).toMatch(/“on a scan without points” is still being checked .*sign it off once/)
    expect((await getMarker(m.id)).review.state).toBe('open')
    // Asking for changes needs no value.
    await review(mentor, m.id, { state: 'changes-asked', note: 'The scan has no points yet.' }).expect(200)
  })

  it('returns a signed-off marker to open when its anchors change through the API, with a revision saying why; a new label keeps it', async () => {
    const m = await checked(await topDistance())
    await review(mentor, m.id, { state: 'signed-off' }).expect(200)
    await measurer.agent.patch(`/api/markers/${m.id}`).send({ label: 'lid, front to back' }).expect(200)
    expect((await getMarker(m.id)).review.state).toBe('signed-off')
    const edited = (await measurer.agent.patch(`/api/markers/${m.id}`).send({ anchors: [onTop(-0.45), onTop(0.45)] }).expect(200)).body.marker as Marker
    expect(edited.review).toMatchObject({ state: 'open', by: { name: 'Milo Measurer' }, note: 'Its anchors or settings changed after the sign-off.' })
    const revs = await history(m.id)
    expect(revs.slice(-2).map((r) => r.action)).toEqual(['edited', 'reopened'])
    expect(revs.at(-1)).toMatchObject({ reviewState: 'open', by: { name: 'Milo Measurer' }, note: 'Its anchors or settings changed after the sign-off.' })
    // An open marker edited again records no further reopening.
    await measurer.agent.patch(`/api/markers/${m.id}`).send({ anchors: [onTop(-0.4), onTop(0.4)] }).expect(200)
    expect((await history(m.id)).filter((r) => r.action === 'reopened')).toHaveLength(1)
  })

  it('returns a signed-off marker to open when a writer moves its anchors live', async () => {
    const m = await checked(await topDistance(measurer, 'live edit'))
    await review(mentor, m.id, { state: 'signed-off' }).expect(200)
    const w = await live(measurer, sceneId)
    const map = w.doc.getMap<{ kind: string; label: string; anchors: { instanceId: string; x: number; y: number; z: number }[]; params: object }>(WORK_MAPS.markers)
    await until(() => map.has(m.id), 5000, 'the marker in the work document')
    const entry = map.get(m.id)!
    map.set(m.id, { ...entry, anchors: [entry.anchors[0]!, { ...entry.anchors[1]!, x: entry.anchors[1]!.x - 0.05 }] })
    const reopened = await until(async () => {
      const now = await getMarker(m.id)
      return now.review.state === 'open' ? now : null
    }, 5000, 'the return to open')
    expect(reopened.review.note).toBe('Its anchors or settings changed after the sign-off.')
    const revs = await until(async () => {
      const list = await history(m.id)
      return list.some((r) => r.action === 'edited') ? list : null
    }, 5000, 'the settled live edit')
    expect(revs.filter((r) => r.action === 'reopened')).toEqual([expect.objectContaining({ by: { id: measurer.user.id, name: 'Milo Measurer' }, reviewState: 'open' })])
  })

  it('returns a signed-off marker to open when the placement it is anchored on moves', async () => {
    const m = await checked(await topDistance(measurer, 'moved with the box'))
    await review(mentor, m.id, { state: 'signed-off' }).expect(200)
    await owner.agent.patch(`/api/instances/${boxPlacement}`).send({ matrix: new Matrix4().makeTranslation(0.2, 0, 0).elements }).expect(200)
    const after = await getMarker(m.id)
    expect(after.review).toMatchObject({ state: 'open', by: { name: 'Rhea Owner' }, note: 'The placement “box” it is measured on was moved after the sign-off.' })
    expect((await history(m.id)).at(-1)).toMatchObject({ action: 'reopened', note: after.review.note })
    // Checked again on its moved placement, with the same length.
    const rechecked = await until(async () => {
      const now = await getMarker(m.id)
      return now.check.state !== 'pending' && now.check.basedOn > m.check.basedOn ? now : null
    }, 20_000, 'the re-check')
    expect(rechecked.check.value).toBeCloseTo(m.check.value!, 3)
    await owner.agent.patch(`/api/instances/${boxPlacement}`).send({ matrix: new Matrix4().identity().elements }).expect(200)
  })
})

describe('history pages', () => {
  it('pages a marker’s history newest first, each page oldest first, and the pages join into the whole', async () => {
    const m = await topDistance(measurer, 'paged history')
    for (let i = 1; i <= 6; i++) await measurer.agent.patch(`/api/markers/${m.id}`).send({ label: `label ${i}` }).expect(200)
    const whole = await history(m.id)
    expect(whole).toHaveLength(7)
    const pages: { revisions: MarkerRevision[]; earlier: string | null }[] = []
    let before: string | null | undefined
    do {
      const res = await owner.agent.get(`/api/markers/${m.id}/history`).query(before ? { limit: 3, before } : { limit: 3 }).expect(200)
      pages.push(res.body)
      before = res.body.earlier
    } while (before)
    expect(pages.map((p) => p.revisions.length)).toEqual([3, 3, 1])
    expect(pages.reverse().flatMap((p) => p.revisions)).toEqual(whole)
    expect(whole.map((r) => r.state.label)).toEqual(['paged history', ...[1, 2, 3, 4, 5, 6].map((i) => `label ${i}`)])
    for (const [query, message] of [
      [{ limit: 500 }, /^query\.limit: must be at most 200/],
      [{ before: 'x1' }, /^query\.before: must be a revision id/],
      [{ since: 1 }, /^query/],
    ] as [object, RegExp][]) {
      expect((await owner.agent.get(`/api/markers/${m.id}/history`).query(query).expect(400)).body.error.message, JSON.stringify(query)).toMatch(message)
    }
  })
})
