// The live connection's caps (server/collab/limits.ts), each met by a client that misbehaves on purpose: a
// raw `ws` socket speaking y-websocket's protocol (a varUint message type, then y-protocols' sync or awareness
// payload). Each is closed with CLOSE_CODES.tooMuch (4429: RFC 6455 section 7.4.2 leaves 4000-4999 to
// applications) and a reason naming the cap, while a well-behaved client on the same document keeps working;
// a document nobody has open leaves memory and comes back whole.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import WebSocket from 'ws'
import pg from 'pg'
import * as Y from 'yjs'
import * as syncProtocol from 'y-protocols/sync'
import * as encoding from 'lib0/encoding'
import { CLOSE_CODES, WORK_MAPS } from '@shared/collab/documents'
import { PRODUCTION_LIVE_LIMITS, type LiveLimits } from '../../server/collab/limits'
import { insertMembership } from '../../server/repositories/memberships'
import { liveClient, synced, type LiveClient } from '../utils/live'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

const LIMITS: LiveLimits = {
  ...PRODUCTION_LIVE_LIMITS,
  syncRequestsPerSecond: 10,
  writesPerSecond: 20,
  writeBytes: 64 * 1024,
  earlyMessages: 8,
  earlyBytes: 64 * 1024,
  backlogBytes: 1024 * 1024,
  backlogMs: 300,
  unloadGraceMs: 300,
}

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let ownerCookie: string
let mentorCookie: string
let sceneId: string
let instanceId: string
const clients: LiveClient[] = []
const sockets: WebSocket[] = []

async function cookieOf(email: string, password: string): Promise<string> {
  const res = await t.agent().post('/api/auth/sign-in').send({ email, password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}

/** A raw socket on a scene's work document, and how it was closed. */
function raw(cookie: string, path = sceneId) {
  const ws = new WebSocket(`${t.url.replace(/^http/, 'ws')}/collab/${path}`, { headers: { origin: t.url, cookie } })
  sockets.push(ws)
  const opened = new Promise<void>((resolve, reject) => {
    ws.once('open', () => resolve())
    ws.once('error', reject)
  })
  // Admitted once the server has greeted it (its sync step 1 comes first).
  const admitted = new Promise<void>((resolve, reject) => {
    ws.once('message', () => resolve())
    ws.once('error', reject)
  })
  const closed = new Promise<{ code: number; reason: string }>((resolve) => ws.once('close', (code, reason) => resolve({ code, reason: reason.toString() })))
  return { ws, opened, admitted, closed }
}

function message(write: (e: encoding.Encoder) => void): Uint8Array {
  const e = encoding.createEncoder()
  write(e)
  return encoding.toUint8Array(e)
}
const syncRequest = () => message((e) => (encoding.writeVarUint(e, 0), syncProtocol.writeSyncStep1(e, new Y.Doc())))
const emptyUpdate = () => message((e) => (encoding.writeVarUint(e, 0), syncProtocol.writeUpdate(e, Y.encodeStateAsUpdate(new Y.Doc()))))

/** A well-behaved client, synced. */
async function good(cookie: string): Promise<LiveClient> {
  const c = liveClient(t.url, cookie, sceneId)
  clients.push(c)
  await synced(c.provider)
  return c
}

/** The well-behaved client still hears the server: a marker made through the API reaches its document. */
async function stillHears(c: LiveClient, label: string): Promise<void> {
  const res = await owner.agent
    .post(`/api/scenes/${sceneId}/markers`)
    .send({ kind: 'distance', label, anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1, y: 0, z: 0 }] })
    .expect(201)
  const id = res.body.marker.id as string
  const end = Date.now() + 5000
  while (!c.doc.getMap(WORK_MAPS.markers).has(id)) {
    if (Date.now() > end) throw new Error(`the well-behaved client never saw “${label}”`)
    await new Promise((r) => setTimeout(r, 20))
  }
  expect(c.provider.wsconnected).toBe(true)
}

const mib = (n: number) => `${(n / 1024 / 1024).toFixed(1)} MiB`

beforeAll(async () => {
  t = await startTestServer({ live: LIMITS })
  owner = await signUpAgent(t, 'Limits Owner')
  const mentor = await signUpAgent(t, 'Limits Mentor')
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Caps' }).expect(201)).body.project.id as string
  await insertMembership(t.server.services.db, projectId, mentor.user.id, 'mentor')
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Caps scene' }).expect(201)).body.scene.id as string
  const scan = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'caps.xyz').expect(202)
  await t.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id as string
  ownerCookie = await cookieOf(owner.email, owner.password)
  mentorCookie = await cookieOf(mentor.email, mentor.password)
})

afterAll(async () => {
  for (const c of clients) c.provider.destroy()
  for (const s of sockets) s.terminate()
  await t?.stop()
})

describe('a live connection’s caps', () => {
  it('closes a socket that floods sync requests; a well-behaved client keeps working', async () => {
    const c = await good(ownerCookie)
    const s = raw(ownerCookie)
    await s.admitted
    for (let i = 0; i < 50; i++) s.ws.send(syncRequest())
    const closed = await s.closed
    expect(closed).toEqual({ code: CLOSE_CODES.tooMuch, reason: `more than ${LIMITS.syncRequestsPerSecond} sync requests a second` })
    await stillHears(c, 'after a sync flood')
  })

  it('closes a writer that floods changes, and one that sends a change over the size cap', async () => {
    const c = await good(ownerCookie)
    const flood = raw(ownerCookie)
    await flood.admitted
    for (let i = 0; i < 100; i++) flood.ws.send(emptyUpdate())
    expect(await flood.closed).toEqual({ code: CLOSE_CODES.tooMuch, reason: `more than ${LIMITS.writesPerSecond} changes a second` })
    const big = raw(ownerCookie)
    await big.admitted
    const doc = new Y.Doc()
    doc.getMap('markers').set('x', 'y'.repeat(100_000))
    big.ws.send(message((e) => (encoding.writeVarUint(e, 0), syncProtocol.writeUpdate(e, Y.encodeStateAsUpdate(doc)))))
    expect(await big.closed).toEqual({ code: CLOSE_CODES.tooMuch, reason: `a change larger than ${LIMITS.writeBytes} bytes` })
    await stillHears(c, 'after a change flood')
  })

  it('closes a read-only connection that sends more than a sync request’s worth', async () => {
    const c = await good(mentorCookie)
    const s = raw(mentorCookie)
    await s.admitted
    // A presence message padded far past the document's own state vector.
    const padding = message((e) => {
      encoding.writeVarUint(e, 1)
      encoding.writeVarUint8Array(e, new Uint8Array(50_000))
    })
    s.ws.send(padding)
    expect(await s.closed).toEqual({ code: CLOSE_CODES.tooMuch, reason: `a message of ${padding.byteLength} bytes from a read-only connection` })
    await stillHears(c, 'after a read-only flood')
  })

  it('closes a socket that floods before its sign-in has been checked, and drops what it sent', async () => {
    // Sign-in checks wait while the sessions table is locked, so the messages surely arrive before admission.
    const lock = new pg.Client({ connectionString: t.config.databaseUrl })
    await lock.connect()
    try {
      await lock.query('BEGIN')
      await lock.query('LOCK TABLE sessions IN ACCESS EXCLUSIVE MODE')
      const s = raw(ownerCookie)
      await s.opened
      for (let i = 0; i < 20; i++) s.ws.send(syncRequest())
      expect(await s.closed).toEqual({ code: CLOSE_CODES.tooMuch, reason: `more than ${LIMITS.earlyMessages} messages or ${LIMITS.earlyBytes} bytes before sign-in was checked` })
    } finally {
      await lock.query('ROLLBACK')
      await lock.end()
    }
  })

  it('cuts off a client that does not read once its unsent data stays over the cap', async () => {
    const c = await good(ownerCookie)
    const s = raw(ownerCookie)
    await s.admitted
    const room = await t.server.collab.room(sceneId, 'work')
    await new Promise((r) => setTimeout(r, 100))
    // The raw socket sends no presence, so it is the one connection without a client id.
    expect([...room.connections.values()].filter((conn) => conn.clientId === null)).toHaveLength(1)
    // The client stops reading: the kernel's buffers fill, then the server's own queue for it grows.
    ;(s.ws as unknown as { _socket: { pause(): void } })._socket.pause()
    globalThis.gc?.()
    const before = process.memoryUsage()
    const rawOnServer = [...room.connections.values()].find((conn) => conn.clientId === null)!.socket
    let backlog = 0
    const sampler = setInterval(() => (backlog = Math.max(backlog, rawOnServer.bufferedAmount)), 5)
    // The server's own writes, broadcast to everyone: 40 x 300 kB.
    for (let i = 0; i < 40; i++) room.transact((doc) => doc.getMap(WORK_MAPS.meta).set('ballast', `${i}`.padEnd(300_000, 'x')))
    await room.flushed()
    const peak = process.memoryUsage()
    const end = Date.now() + 5000
    while ([...room.connections.values()].filter((conn) => conn.clientId === null).length > 0 && Date.now() < end) await new Promise((r) => setTimeout(r, 50))
    clearInterval(sampler)
    const cut = [...room.connections.values()].filter((conn) => conn.clientId === null)
    expect(cut).toEqual([])
    expect(backlog).toBeGreaterThan(LIMITS.backlogBytes)
    expect(rawOnServer.readyState).toBe(WebSocket.CLOSED)
    room.transact((doc) => doc.getMap(WORK_MAPS.meta).delete('ballast'))
    await room.flushed()
    globalThis.gc?.()
    const after = process.memoryUsage()
    // For the closing note: the server's memory before the flood, at its peak and once the socket was cut off.
    console.info(
      `backlog cap: ${mib(backlog)} unsent at the peak; gc ${globalThis.gc ? 'on' : 'off'}; arrayBuffers ${mib(before.arrayBuffers)} before, ${mib(peak.arrayBuffers)} at the peak, ${mib(after.arrayBuffers)} after; rss ${mib(before.rss)}, ${mib(peak.rss)}, ${mib(after.rss)}`,
    )
    await stillHears(c, 'after a client that did not read')
  })
})

describe('documents in memory', () => {
  it('unloads a document nobody has open after the grace, and loads it again whole', async () => {
    const label = 'kept through an unload'
    const c = await good(ownerCookie)
    await stillHears(c, label)
    c.provider.destroy()
    for (const other of clients) other.provider.destroy()
    const end = Date.now() + 5000
    while (t.server.collab.isLoaded(sceneId, 'work') && Date.now() < end) await new Promise((r) => setTimeout(r, 50))
    expect(t.server.collab.isLoaded(sceneId, 'work')).toBe(false)
    const again = await good(ownerCookie)
    const labels = [...again.doc.getMap<{ label: string }>(WORK_MAPS.markers).values()].map((m) => m.label)
    expect(labels).toContain(label)
    expect(labels).toContain('after a sync flood')
  })
})
