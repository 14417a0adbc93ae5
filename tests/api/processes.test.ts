// Several server processes on one PostgreSQL: two Spanmark servers (each with its own HTTP server, live
// documents and fan-out listener) share one database, as processes behind a proxy would. Edits made through
// either reach the clients of the other and converge with the database; revocations and presence cross;
// positions follow commit order, a reader that missed announcements or whose updates were compacted away
// catches up by position; a lost listening connection comes back by itself and catches up.
import { isDeepStrictEqual } from 'node:util'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import * as Y from 'yjs'
import pino from 'pino'
import type { WebsocketProvider } from 'y-websocket'
import { CLOSE_CODES, WORK_MAPS } from '@shared/collab/documents'
import { Room } from '../../server/collab/room'
import { insertUpdate, writeSnapshot } from '../../server/repositories/sceneUpdates'
import { ingestScan } from '../../server/points/ingest'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { liveClient, synced } from '../utils/live'
import { upload } from '../utils/scans'
import { joinProject, signUpAgent, startPeer, startTestServer, type TestServer } from '../utils/server'

let a: TestServer
let b: Awaited<ReturnType<typeof startPeer>>
let sceneId: string
let instanceId: string
let projectId: string
let owner: Awaited<ReturnType<typeof signUpAgent>>
let measurer: Awaited<ReturnType<typeof signUpAgent>>
const cookies: Record<string, string> = {}
const open: WebsocketProvider[] = []

async function cookieOf(url: string, email: string, password: string): Promise<string> {
  const res = await supertest(url).post('/api/auth/sign-in').set('Origin', url).send({ email, password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}
function client(url: string, cookie: string, path = sceneId) {
  const c = liveClient(url, cookie, path)
  open.push(c.provider)
  return c
}
async function until(check: () => boolean | Promise<boolean>, ms = 5000, what = 'the condition'): Promise<void> {
  const end = Date.now() + ms
  while (!(await check())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 20))
  }
}
const entry = (label: string, x = 0) => ({ kind: 'distance', label, anchors: [{ instanceId, x, y: 0, z: 0 }, { instanceId, x: x + 1, y: 0, z: 0 }], params: {} })
const closeCode = (p: WebsocketProvider) =>
  new Promise<number>((resolve) =>
    p.on('connection-close', (event: CloseEvent | null) => {
      p.shouldConnect = false
      resolve(event?.code ?? -1)
    }),
  )
const stored = async () => (await Room.load(a.server.services.db, sceneId, 'work', pino({ level: 'silent' }))).doc.getMap(WORK_MAPS.markers).toJSON()

beforeAll(async () => {
  a = await startTestServer()
  b = await startPeer(a)
  owner = await signUpAgent(a, 'Two Owner')
  measurer = await signUpAgent(a, 'Two Measurer')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Two processes' }).expect(201)).body.project.id
  await joinProject(a, owner.agent, projectId, measurer, 'measurer')
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Shared scene' }).expect(201)).body.scene.id
  const scan = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'three.xyz').expect(202)
  await a.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id
  // A session made through one process signs in on the other: sessions live in PostgreSQL.
  cookies.ownerA = await cookieOf(a.url, owner.email, owner.password)
  cookies.measurerB = await cookieOf(b.url, measurer.email, measurer.password)
})
afterAll(async () => {
  for (const p of open) p.destroy()
  await b?.stop()
  await a?.stop()
})

describe('live documents across two processes', () => {
  it('sends an edit made through one process to the clients of the other, and both converge with the database', async () => {
    const onA = client(a.url, cookies.ownerA!), onB = client(b.url, cookies.measurerB!)
    await Promise.all([synced(onA.provider), synced(onB.provider)])
    const m1 = '5e0e0000-0000-4000-8000-0000000002a1', m2 = '5e0e0000-0000-4000-8000-0000000002b2'
    onA.markers.set(m1, entry('made on A'))
    onB.markers.set(m2, entry('made on B', 1))
    await until(() => onA.markers.size === 2 && onB.markers.size === 2, 5000, 'both markers on both clients')
    // A burst from both sides at once: every edit reaches the other side, in the end the same state.
    for (let i = 0; i < 20; i++) {
      onA.markers.set(m1, entry(`A ${i}`))
      onB.markers.set(m2, entry(`B ${i}`, 1))
    }
    await until(() => isDeepStrictEqual(onA.markers.toJSON(), onB.markers.toJSON()) && (onA.markers.get(m1) as { label: string }).label === 'A 19' && (onB.markers.get(m2) as { label: string }).label === 'B 19', 8000, 'convergence')
    await until(async () => isDeepStrictEqual(await stored(), onA.markers.toJSON()), 5000, 'the database to hold what the clients hold')
    // Both processes' rooms hold every position.
    const [ra, rb] = [await a.server.collab.room(sceneId, 'work'), await b.server.collab.room(sceneId, 'work')]
    await until(() => ra.appliedPosition === rb.appliedPosition, 5000, 'both rooms at the same position')
    // A REST write through B reaches A's client (the record document and the work document both cross).
    await measurer.agent.patch(`/api/markers/${m1}`).send({ label: 'renamed through the API' }).expect(200)
    await until(() => (onA.markers.get(m1) as { label: string } | undefined)?.label === 'renamed through the API', 5000, 'the API rename on A')
  })

  it('gives positions in commit order, and a reader that missed announcements or lost them to compaction catches up', async () => {
    const db = a.server.services.db
    const rb = await b.server.collab.room(sceneId, 'work')
    const before = BigInt(rb.appliedPosition)
    // Ten concurrent writers on one document: positions are 1..10 after the last one, without gaps or repeats.
    const writer = new Y.Doc()
    const updates: Uint8Array[] = []
    writer.on('update', (u: Uint8Array) => updates.push(u))
    for (let i = 0; i < 10; i++) writer.getMap(WORK_MAPS.markers).set(`5e0e0000-0000-4000-8000-0000000003${String(i).padStart(2, '0')}`, entry(`direct ${i}`))
    const seqs = (await Promise.all(updates.map((u) => insertUpdate(db, sceneId, 'work', u, null)))).map((r) => BigInt(r.seq)).sort((x, y) => (x < y ? -1 : 1))
    expect(seqs).toEqual(Array.from({ length: 10 }, (_, i) => seqs[0]! + BigInt(i)))
    // Compacted away before B read them: B reads the snapshot and the rest, and holds every marker.
    const ra = await a.server.collab.room(sceneId, 'work')
    await until(() => BigInt(ra.appliedPosition) >= seqs.at(-1)!, 5000, 'A to apply them')
    await writeSnapshot(db, sceneId, 'work', Y.encodeStateAsUpdate(ra.doc), ra.appliedPosition)
    await rb.catchUp()
    expect(BigInt(rb.appliedPosition)).toBeGreaterThan(before)
    for (let i = 0; i < 10; i++) expect(rb.doc.getMap(WORK_MAPS.markers).has(`5e0e0000-0000-4000-8000-0000000003${String(i).padStart(2, '0')}`)).toBe(true)
  })

  it('catches up by itself after the listening connection is lost (as in a PostgreSQL restart)', async () => {
    const onA = client(a.url, cookies.ownerA!), onB = client(b.url, cookies.measurerB!)
    await Promise.all([synced(onA.provider), synced(onB.provider)])
    await b.server.collab.fanout.dropConnection()
    const m = '5e0e0000-0000-4000-8000-0000000004c1'
    onA.markers.set(m, entry('while B was not listening'))
    await until(() => onB.markers.has(m), 8000, 'the edit on B after its listener came back')
  })

  it('carries presence across: a client on one process sees the other process’s clients', async () => {
    const onA = client(a.url, cookies.ownerA!), onB = client(b.url, cookies.measurerB!)
    await Promise.all([synced(onA.provider), synced(onB.provider)])
    onA.provider.awareness.setLocalState({ cursor: [1, 2, 3] })
    await until(() => [...onB.provider.awareness.getStates().values()].some((s) => (s as { user?: { name: string } }).user?.name === 'Two Owner'), 5000, 'A’s presence on B')
  })

  it('cuts off a member on the other process within a second of being removed, and a signed-out session too', async () => {
    const extra = await signUpAgent(a, 'Two Extra')
    await joinProject(a, owner.agent, projectId, extra, 'measurer')
    const cookie = await cookieOf(b.url, extra.email, extra.password)
    const onB = client(b.url, cookie)
    await synced(onB.provider)
    const closed = closeCode(onB.provider)
    const at = Date.now()
    await owner.agent.delete(`/api/projects/${projectId}/members/${extra.user.id}`).expect(204)
    expect(await closed).toBe(CLOSE_CODES.accessEnded)
    expect(Date.now() - at).toBeLessThan(1000 + 500)

    // Signing out through A closes that session's socket on B.
    const session = await cookieOf(b.url, owner.email, owner.password)
    const mine = client(b.url, session)
    await synced(mine.provider)
    const signedOut = closeCode(mine.provider)
    await supertest(a.url).post('/api/auth/sign-out').set('Origin', a.url).set('Cookie', session).expect(204)
    expect(await signedOut).toBe(CLOSE_CODES.signedOut)
  })

  it('counts rate limits across processes: a client’s failed sign-ins on one count on the other', async () => {
    // The test config's sign-in limit is loose (10 000 a minute); a peer with a tight one shares the same count.
    const c = await startPeer(a, undefined, { rateLimits: { ...a.config.rateLimits, signIn: { windowMs: 60_000, limit: 4 } } })
    const d = await startPeer(a, undefined, { rateLimits: { ...a.config.rateLimits, signIn: { windowMs: 60_000, limit: 4 } } })
    try {
      // A new address each time: the per-address slowdown (3 free failures) is not what is counted here.
      let n = 0
      const wrong = (url: string) => supertest(url).post('/api/auth/sign-in').set('Origin', url).send({ email: `nobody-${++n}@spanmark.example`, password: 'not the password' })
      for (const url of [c.url, d.url, c.url, d.url]) expect((await wrong(url)).status).not.toBe(429)
      // The fifth, on either process: over the shared limit of 4.
      expect((await wrong(c.url)).status).toBe(429)
      expect((await wrong(d.url)).status).toBe(429)
    } finally {
      await c.stop()
      await d.stop()
    }
  })

  it('lets only the current claim on a scan write: a stale worker’s late tiles and states are discarded', async () => {
    const { db, objects, log } = a.server.services
    const n = 5000
    const positions = new Float64Array(3 * n).map((_, i) => (i % 3 === 2 ? 0 : (i * 0.37) % 2))
    const id = (await upload(owner.agent, projectId, writeBinaryPly({ count: n, positions }), 'claimed.ply').expect(202)).body.scan.id as string
    const deps = { db, objects, log, lazLimitBytes: a.config.uploads.lazLimitBytes, staleMs: a.config.ingestStaleMs, maxAttempts: 3 }
    // Worker A claims the scan, then stalls before it reads a byte (its object store waits on a gate).
    let release!: () => void
    const gate = new Promise<void>((r) => (release = r))
    const stalled = { ...objects, get: async (key: string) => (await gate, objects.get(key)) } as typeof objects
    const workerA = ingestScan({ ...deps, objects: stalled, name: 'worker-a' }, id)
    await until(async () => (await db.selectFrom('scans').select('claimed_by').where('id', '=', id).executeTakeFirst())?.claimed_by === 'worker-a', 5000, 'A’s claim')
    const claimA = (await db.selectFrom('scans').select('claim_id').where('id', '=', id).executeTakeFirstOrThrow()).claim_id!
    // A's heartbeat stops (as a stalled worker's would); worker B takes the scan and finishes it.
    await db.updateTable('scans').set({ heartbeat_at: new Date(Date.now() - 3_600_000) }).where('id', '=', id).execute()
    expect(await ingestScan({ ...deps, name: 'worker-b' }, id)).toBe('done')
    const claimB = (await db.selectFrom('scans').select('claim_id').where('id', '=', id).executeTakeFirstOrThrow()).claim_id
    expect(claimB).not.toBe(claimA)
    // A wakes up: everything it writes is discarded, and it says so by stopping.
    release()
    expect(await workerA).toBe('skipped')
    const scan = await db.selectFrom('scans').select(['status', 'point_count', 'claimed_by']).where('id', '=', id).executeTakeFirstOrThrow()
    expect({ ...scan, point_count: Number(scan.point_count) }).toEqual({ status: 'ready', point_count: n, claimed_by: 'worker-b' })
    const tiles = await db.selectFrom('scan_tiles').select(['node_key', 'point_count', 'claim_id']).where('scan_id', '=', id).execute()
    expect(tiles.reduce((sum, t) => sum + t.point_count, 0)).toBe(n)
    expect(new Set(tiles.map((t) => t.claim_id))).toEqual(new Set([claimB]))
    // A late tile of the old claim is refused by the database itself.
    await expect(db.insertInto('scan_tiles').values({ scan_id: id, claim_id: claimA, node_key: 'r7', level: 1, point_count: 1, byte_size: 1, data: Buffer.from([0]), min_x: 0, min_y: 0, min_z: 0, max_x: 0, max_y: 0, max_z: 0 }).execute()).rejects.toThrow(/scan_tiles_claim/)
  })
})
