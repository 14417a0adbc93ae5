// Faults survived by several server processes on one PostgreSQL. A server process of its own (so it can be
// killed with SIGKILL) beside the test's server: its live clients move to the survivor and nothing any other
// client had seen is lost; a marker check it held when it died is finished by the survivor, once; pending
// checks two live processes both see are each stored once.
import { isDeepStrictEqual } from 'node:util'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import pino from 'pino'
import { sql } from 'kysely'
import type { WebsocketProvider } from 'y-websocket'
import { RECORD_MAPS, WORK_MAPS } from '@shared/collab/documents'
import { Room } from '../../server/collab/room'
import { ingestScan } from '../../server/points/ingest'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { upload } from '../utils/scans'
import { liveClient, synced, type LiveClient } from '../utils/live'
import { spawnServer, type ServerProcess } from '../utils/processes'
import { joinProject, signUpAgent, startPeer, startTestServer, type TestServer } from '../utils/server'

let a: TestServer
let sceneId: string
let instanceId: string
let projectId: string
let owner: Awaited<ReturnType<typeof signUpAgent>>
let measurer: Awaited<ReturnType<typeof signUpAgent>>
const open: WebsocketProvider[] = []
const spawned: ServerProcess[] = []

async function cookieOf(url: string, email: string, password: string): Promise<string> {
  const res = await supertest(url).post('/api/auth/sign-in').set('Origin', url).send({ email, password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}
function client(url: string, cookie: string, doc?: LiveClient['doc']): LiveClient {
  const c = liveClient(url, cookie, sceneId, url, doc)
  open.push(c.provider)
  return c
}
async function until(check: () => boolean | Promise<boolean>, ms: number, what: string): Promise<void> {
  const end = Date.now() + ms
  while (!(await check())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 25))
  }
}
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))
/** One marker id per client and edit: every edit adds an entry, so a lost edit is a missing key. */
const markerId = (c: number, i: number) => `5e0e0000-0000-4000-8000-${String(c * 1000 + i).padStart(12, '0')}`
const entry = (label: string, x = 0) => ({ kind: 'distance', label, anchors: [{ instanceId, x, y: 0, z: 0 }, { instanceId, x: x + 1, y: 0, z: 0 }], params: {} })
/** The work document as PostgreSQL stores it. */
const storedDoc = async () => (await Room.load(a.server.services.db, sceneId, 'work', pino({ level: 'silent' }))).doc.getMap(WORK_MAPS.markers).toJSON()
const storedIds = async () => (await a.server.services.db.selectFrom('markers').select('id').where('scene_id', '=', sceneId).execute()).map((r) => r.id).sort()

beforeAll(async () => {
  a = await startTestServer()
  owner = await signUpAgent(a, 'Fault Owner')
  measurer = await signUpAgent(a, 'Fault Measurer')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Faults' }).expect(201)).body.project.id
  await joinProject(a, owner.agent, projectId, measurer, 'measurer')
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Shared scene' }).expect(201)).body.scene.id
  // A floor of points 5 cm apart, 2 m by 2 m, processed here (no worker process in this file).
  const n = 41 * 41
  const positions = new Float64Array(3 * n).map((_, i) => (i % 3 === 0 ? (Math.floor(i / 3) % 41) * 0.05 : i % 3 === 1 ? Math.floor(Math.floor(i / 3) / 41) * 0.05 : 0))
  const scanId = (await upload(owner.agent, projectId, writeBinaryPly({ count: n, positions }), 'floor.ply').expect(202)).body.scan.id as string
  const { db, objects, log } = a.server.services
  expect(await ingestScan({ db, objects, log, lazLimitBytes: a.config.uploads.lazLimitBytes, staleMs: a.config.ingestStaleMs, maxAttempts: 3, name: 'test' }, scanId)).toBe('done')
  instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance.id
  // Every stored check is counted by PostgreSQL itself: a trigger on the check column, outside the code under test.
  await sql`create table check_stores (marker_id uuid, revision int, at timestamptz default clock_timestamp())`.execute(a.server.services.db)
  await sql`create function count_check_store() returns trigger language plpgsql as $$ begin insert into check_stores (marker_id, revision) values (new.id, new.revision); return new; end $$`.execute(a.server.services.db)
  await sql`create trigger count_check_store after update of "check" on markers for each row execute function count_check_store()`.execute(a.server.services.db)
}, 60_000)
afterAll(async () => {
  for (const p of open) p.destroy()
  for (const p of spawned) await p.kill()
  await a?.stop()
})

const storesOf = async (id: string) => (await sql<{ n: number }>`select count(*)::int as n from check_stores where marker_id = ${id}`.execute(a.server.services.db)).rows[0]!

describe('a server process killed with SIGKILL', () => {
  it('moves its clients to the survivor: nothing any other client saw is lost, and all converge with the database', { timeout: 40_000 }, async () => {
    const b = await spawnServer(a.config.databaseUrl)
    spawned.push(b)
    const [ownerA, measurerA, ownerB, measurerB] = await Promise.all([
      cookieOf(a.url, owner.email, owner.password),
      cookieOf(a.url, measurer.email, measurer.password),
      cookieOf(b.url, owner.email, owner.password),
      cookieOf(b.url, measurer.email, measurer.password),
    ])
    const onA = [client(a.url, ownerA), client(a.url, measurerA)]
    const onB = [client(b.url, ownerB), client(b.url, measurerB)]
    const all = [...onA, ...onB]
    await Promise.all(all.map((c) => synced(c.provider)))
    // Everybody edits, on both processes at once.
    const made = new Set<string>()
    const edit = (c: number, i: number) => {
      all[c]!.markers.set(markerId(c, i), entry(`client ${c} edit ${i}`, i))
      made.add(markerId(c, i))
    }
    for (let i = 0; i < 4; i++) {
      for (let c = 0; c < all.length; c++) edit(c, i)
      await sleep(30)
    }
    await until(() => all.every((c) => c.markers.size === made.size), 10_000, 'the first edits on every client')
    // Mid-session: B dies while its clients (and A's) keep editing.
    for (let c = 0; c < all.length; c++) edit(c, 4)
    await b.kill()
    const seenOnA = new Set(onA.flatMap((c) => [...c.markers.keys()]))
    for (let i = 5; i < 8; i++) {
      for (let c = 0; c < all.length; c++) edit(c, i)
      await sleep(30)
    }
    // B's clients are given the other address: the same documents, connected to A.
    for (const c of onB) {
      c.provider.shouldConnect = false
      c.provider.destroy()
    }
    const moved = onB.map((c, i) => client(a.url, i === 0 ? ownerA : measurerA, c.doc))
    const clients = [...onA, ...moved]
    await Promise.all(moved.map((c) => synced(c.provider)))
    await until(() => clients.every((c) => c.markers.size === made.size && isDeepStrictEqual(c.markers.toJSON(), clients[0]!.markers.toJSON())), 15_000, 'every client to hold every edit')
    for (const id of seenOnA) expect(clients[0]!.markers.has(id), `${id}, seen on A when B died`).toBe(true)
    // The database holds what the clients hold: the stored document, and the markers table.
    await until(async () => isDeepStrictEqual(await storedDoc(), clients[0]!.markers.toJSON()), 10_000, 'the stored document to match the clients')
    await until(async () => isDeepStrictEqual(await storedIds(), [...made].sort()), 10_000, 'every marker in the markers table')
  })
})

describe('marker checks across processes', () => {
  it('finishes a check whose holder was killed, on the survivor, once', { timeout: 30_000 }, async () => {
    // B holds every check it starts for 60 s: it is killed long before that.
    const b = await spawnServer(a.config.databaseUrl, { SPANMARK_TEST_CHECK_DELAY_MS: '60000' })
    spawned.push(b)
    const agentB = supertest.agent(b.url).set('Origin', b.url)
    await agentB.post('/api/auth/sign-in').send({ email: owner.email, password: owner.password }).expect(200)
    const body = { kind: 'distance', label: 'held by B', anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1, y: 0, z: 0 }] }
    // The request waits on B's check; it never answers.
    agentB.post(`/api/scenes/${sceneId}/markers`).send(body).then(() => undefined, () => undefined)
    const db = a.server.services.db
    let id = ''
    await until(async () => {
      const row = await db.selectFrom('markers').select(['id', 'check_owner', 'check_state']).where('scene_id', '=', sceneId).where('label', '=', 'held by B').executeTakeFirst()
      id = row?.id ?? ''
      return !!row?.check_owner && row.check_owner !== a.server.services.processId
    }, 10_000, 'B to hold the check')
    // A leaves it alone while B lives (B beats): well past a lease and several sweeps, it is still B's.
    await sleep(a.config.cluster.leaseMs + 4 * a.config.cluster.sweepMs)
    const held = await db.selectFrom('markers').select(['check_state', 'check_owner']).where('id', '=', id).executeTakeFirstOrThrow()
    expect(held.check_state).toBe('pending')
    expect(held.check_owner).not.toBe(a.server.services.processId)
    expect((await storesOf(id)).n).toBe(0)
    const killedAt = Date.now()
    await b.kill()
    await until(async () => (await db.selectFrom('markers').select('check_state').where('id', '=', id).executeTakeFirstOrThrow()).check_state !== 'pending', 10_000, 'the survivor to finish the check')
    const tookMs = Date.now() - killedAt
    expect(tookMs, 'within a few seconds of the death').toBeLessThan(a.config.cluster.leaseMs + 3000)
    const row = await db.selectFrom('markers').select(['check_state', 'check', 'revision', 'check_owner']).where('id', '=', id).executeTakeFirstOrThrow()
    // A distance between (0,0,0) and (1,0,0) on scanned points at those places: 1 m.
    expect(row.check_state).toBe('checked')
    expect((row.check as { value: number }).value).toBeCloseTo(1, 6)
    expect(row.check_owner).toBeNull()
    expect((await storesOf(id)).n, 'stored once').toBe(1)
    // The survivor wrote it into the record document.
    const record = await a.server.collab.room(sceneId, 'record')
    await until(() => (record.doc.getMap(RECORD_MAPS.markers).get(id) as { check?: { state: string } } | undefined)?.check?.state === 'checked', 5000, 'the record entry')
  })

  it('stores each pending check once when two live processes both see it', { timeout: 30_000 }, async () => {
    const p = await startPeer(a, undefined, { testCheckDelayMs: 150 })
    try {
      const db = a.server.services.db
      const ids = (await db.selectFrom('markers').select('id').where('scene_id', '=', sceneId).limit(8).execute()).map((r) => r.id)
      expect(ids.length).toBe(8)
      // Pending again with a new revision, held by nobody (as a restart leaves them): both processes' sweeps see them.
      await db.updateTable('markers').set((eb) => ({ revision: eb('revision', '+', 1), check_state: 'pending', check_owner: null })).where('id', 'in', ids).execute()
      await sql`delete from check_stores`.execute(db)
      // And both are also asked directly, at once, as two API writes would.
      for (const id of ids) {
        void a.server.services.markerChecks.checkNow(id)
        void p.server.services.markerChecks.checkNow(id)
      }
      await until(async () => (await db.selectFrom('markers').select('id').where('id', 'in', ids).where('check_state', '=', 'pending').execute()).length === 0, 15_000, 'every check stored')
      await Promise.all([a.server.services.markerChecks.idle(), p.server.services.markerChecks.idle()])
      for (const id of ids) expect((await storesOf(id)).n, `${id} stored once`).toBe(1)
    } finally {
      await p.stop()
    }
  })
})
