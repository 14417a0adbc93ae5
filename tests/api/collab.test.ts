// Live documents over WebSockets with real y-websocket clients (the library's own provider, on ws in
// Node as the ws package's client allows): convergence, roles at the socket, named close codes, store-before-send,
// compaction and reload, and presence limited to the connection's own client id.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import * as Y from 'yjs'
import * as awarenessProtocol from 'y-protocols/awareness'
import * as encoding from 'lib0/encoding'
import type { WebsocketProvider } from 'y-websocket'
import pino from 'pino'
import { CLOSE_CODES, WORK_MAPS } from '@shared/collab/documents'
import { Room } from '../../server/collab/room'
import { countUpdates } from '../../server/repositories/sceneUpdates'
import { liveClient, synced } from '../utils/live'
import { joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
let sceneId: string
let instanceId: string
let ownerAgent: ReturnType<TestServer['agent']>
const cookies: Record<string, string> = {}
const open: WebsocketProvider[] = []

async function cookieOf(email: string, password: string): Promise<string> {
  const res = await supertest(t.url).post('/api/auth/sign-in').set('Origin', t.url).send({ email, password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}

function client(cookie: string | null, path = sceneId, origin: string | null = null) {
  const c = liveClient(t.url, cookie, path, origin ?? t.url)
  open.push(c.provider)
  return c
}

async function until(check: () => boolean, ms = 5000): Promise<void> {
  const end = Date.now() + ms
  while (!check()) {
    if (Date.now() > end) throw new Error('timed out')
    await new Promise((r) => setTimeout(r, 20))
  }
}
const closeCode = (p: WebsocketProvider) => closeEvent(p).then((e) => e.code)
const closeEvent = (p: WebsocketProvider) =>
  new Promise<{ code: number; reason: string }>((resolve) => p.on('connection-close', (event: CloseEvent | null) => {
    p.shouldConnect = false
    resolve({ code: event?.code ?? -1, reason: String(event?.reason ?? '') })
  }))
const M1 = '5e0e0000-0000-4000-8000-0000000000c1', M2 = '5e0e0000-0000-4000-8000-0000000000c2'
const entry = (label: string, x = 0) => ({ kind: 'distance', label, anchors: [{ instanceId, x, y: 0, z: 0 }, { instanceId, x: x + 1, y: 0, z: 0 }], params: {} })

beforeAll(async () => {
  // A run of live edits settles into one revision once its author leaves the marker alone for liveSettleMs.
  // Each edit is checked against the database before its timer starts again; on a loaded machine (other work
  // beside the suite) that can take longer than the test setting's 300 ms between two edits
  // sent 40 ms apart, and the run splits in two. A second leaves a busy machine room and still tells one run
  // from separate edits.
  t = await startTestServer({ liveSettleMs: 1000 })
  const people = { owner: await signUpAgent(t, 'Live Owner'), measurer: await signUpAgent(t, 'Live Measurer'), mentor: await signUpAgent(t, 'Live Mentor'), outsider: await signUpAgent(t, 'Live Outsider') }
  const projectId = (await people.owner.agent.post('/api/projects').send({ name: 'Live' }).expect(201)).body.project.id
  for (const role of ['measurer', 'mentor'] as const) await joinProject(t, people.owner.agent, projectId, people[role], role)
  sceneId = (await people.owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Live scene' }).expect(201)).body.scene.id
  // A placement of a scan marked ready by hand (no worker here: its markers stay pending, which is enough).
  const scan = await people.owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'three.xyz').expect(202)
  await t.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  instanceId = (await people.owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id
  ownerAgent = people.owner.agent
  for (const [role, p] of Object.entries(people)) cookies[role] = await cookieOf(p.email, p.password)
})
afterAll(async () => {
  for (const p of open) p.destroy()
  await t?.stop()
})

describe('live documents', () => {
  it('converges two writers, and stores every update before it is sent', async () => {
    const a = client(cookies.owner!), b = client(cookies.measurer!)
    await Promise.all([synced(a.provider), synced(b.provider)])
    a.markers.set(M1, entry('from A'))
    b.markers.set(M2, entry('from B', 1))
    await until(() => a.markers.size === 2 && b.markers.size === 2)
    expect(b.markers.get(M1)).toEqual(entry('from A'))
    // Whatever a client has seen is in the store: a document loaded from it alone has both.
    const stored = await Room.load(t.server.services.db, sceneId, 'work', pino({ level: 'silent' }))
    expect(stored.doc.getMap(WORK_MAPS.markers).toJSON()).toEqual(a.markers.toJSON())
  })

  it('serves a mentor the document, and closes their socket (read-only) when they send a change, storing none of it', async () => {
    const mentor = client(cookies.mentor!)
    await synced(mentor.provider)
    expect(mentor.markers.has(M1)).toBe(true)
    const before = Number((await countUpdates(t.server.services.db, sceneId, 'work')).n)
    const closed = closeEvent(mentor.provider)
    mentor.markers.set('5e0e0000-0000-4000-8000-0000000000c3', entry('mentor wrote this'))
    expect(await closed).toMatchObject({ code: CLOSE_CODES.readOnly, reason: expect.stringMatching(/mentor/) })
    const fresh = client(cookies.owner!)
    await synced(fresh.provider)
    expect(fresh.markers.has('5e0e0000-0000-4000-8000-0000000000c3')).toBe(false)
    expect(Number((await countUpdates(t.server.services.db, sceneId, 'work')).n)).toBe(before)
  })

  it('lets nobody write the record document (closed, read-only)', async () => {
    const owner = client(cookies.owner!, `${sceneId}/record`)
    await synced(owner.provider)
    const closed = closeCode(owner.provider)
    owner.doc.getMap('markers').set(M1, { state: 'checked' })
    expect(await closed).toBe(CLOSE_CODES.readOnly)
    const stored = await Room.load(t.server.services.db, sceneId, 'record', pino({ level: 'silent' }))
    expect(stored.doc.getMap('markers').get(M1)).not.toEqual({ state: 'checked' })
    expect(stored.doc.getMap('markers').get(M1)).toMatchObject({ revision: 1 })
  })

  it('refuses an outsider, a caller without a session and a foreign origin with named close codes', async () => {
    expect(await closeCode(client(cookies.outsider!).provider)).toBe(CLOSE_CODES.forbidden)
    expect(await closeCode(client(null).provider)).toBe(CLOSE_CODES.unauthenticated)
    expect(await closeCode(client(cookies.owner!, sceneId, 'http://elsewhere.example').provider)).toBe(CLOSE_CODES.badOrigin)
    expect(await closeCode(client(cookies.owner!, '00000000-0000-4000-8000-000000000000').provider)).toBe(CLOSE_CODES.forbidden)
  })

  it('compacts the log into a snapshot that loads to the same state', async () => {
    const db = t.server.services.db
    const room = await t.server.collab.room(sceneId, 'work')
    await room.flushed()
    const state = room.doc.getMap(WORK_MAPS.markers).toJSON()
    await room.compact()
    expect(Number((await countUpdates(db, sceneId, 'work')).n)).toBe(0)
    const reloaded = await Room.load(db, sceneId, 'work', pino({ level: 'silent' }))
    expect(reloaded.doc.getMap(WORK_MAPS.markers).toJSON()).toEqual(state)
  })

  it('takes presence only for the connection’s own client id, with the name from its session', async () => {
    const a = client(cookies.owner!), b = client(cookies.measurer!)
    await Promise.all([synced(a.provider), synced(b.provider)])
    b.provider.awareness.setLocalStateField('cursor', [1, 2, 3])
    a.provider.awareness.setLocalState({ user: { name: 'Somebody Else' }, cursor: [0, 0, 0] })
    await until(() => {
      const seen = b.provider.awareness.getStates().get(a.doc.clientID) as { user?: { name: string } } | undefined
      return seen?.user?.name === 'Live Owner'
    })
    // A forged presence for b's client id, sent on a's socket: dropped.
    const fake = new Y.Doc()
    fake.clientID = b.doc.clientID
    const forged = new awarenessProtocol.Awareness(fake)
    forged.setLocalState({ user: { name: 'Mallory' }, cursor: [9, 9, 9] })
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, 1)
    encoding.writeVarUint8Array(encoder, awarenessProtocol.encodeAwarenessUpdate(forged, [b.doc.clientID]))
    a.provider.ws!.send(encoding.toUint8Array(encoder))
    await new Promise((r) => setTimeout(r, 400))
    const room = await t.server.collab.room(sceneId, 'work')
    const bState = room.awareness.getStates().get(b.doc.clientID) as { user: { name: string }; cursor: number[] }
    expect(bState.user.name).toBe('Live Measurer')
    expect(bState.cursor).toEqual([1, 2, 3])
  })
})

describe('one model: the API and the live documents', () => {
  const anchors = () => [
    { instanceId, x: 0, y: 0, z: 0 },
    { instanceId, x: 1, y: 0, z: 0 },
  ]

  it('shows a marker made through the API in the work document, and its record in the record document', async () => {
    const work = client(cookies.mentor!), record = client(cookies.mentor!, `${sceneId}/record`)
    await Promise.all([synced(work.provider), synced(record.provider)])
    const made = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: 'made by REST', anchors: anchors() }).expect(201)).body.marker
    await until(() => work.markers.has(made.id) && record.doc.getMap('markers').has(made.id))
    expect(work.markers.get(made.id)).toMatchObject({ kind: 'distance', label: 'made by REST', anchors: anchors() })
    expect(record.doc.getMap('markers').get(made.id)).toMatchObject({ revision: 1, author: { name: 'Live Owner' } })
    await ownerAgent.delete(`/api/markers/${made.id}`).expect(204)
    await until(() => !work.markers.has(made.id) && !record.doc.getMap('markers').has(made.id))
  })

  it('stores a marker a writer makes live, as the API returns it', async () => {
    const w = client(cookies.measurer!)
    await synced(w.provider)
    const id = '5e0e0000-0000-4000-8000-000000000001'
    w.markers.set(id, { kind: 'distance', label: 'made live', anchors: anchors(), params: {} })
    const deadline = Date.now() + 5000
    let found: { label: string; createdBy: { name: string } } | undefined
    while (!found && Date.now() < deadline) {
      found = (await ownerAgent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers.find((m: { id: string }) => m.id === id)
      if (!found) await new Promise((r) => setTimeout(r, 50))
    }
    expect(found).toMatchObject({ label: 'made live', createdBy: { name: 'Live Measurer' } })
  })

  it('refuses a live marker the checks refuse (a distance with one anchor) before applying it: closed, naming the field', async () => {
    const w = client(cookies.measurer!), other = client(cookies.owner!)
    await Promise.all([synced(w.provider), synced(other.provider)])
    const id = '5e0e0000-0000-4000-8000-000000000002'
    const closed = closeEvent(w.provider)
    w.markers.set(id, { kind: 'distance', label: 'one anchor', anchors: anchors().slice(0, 1), params: {} })
    // The same words as the API's 400 for this body (shared MarkerCreateBody), after the marker's id.
    expect(await closed).toMatchObject({ code: CLOSE_CODES.refused, reason: expect.stringMatching(new RegExp(`^marker ${id}: anchors`)) })
    expect(other.markers.has(id)).toBe(false)
    const list = (await ownerAgent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers
    expect(list.some((m: { id: string }) => m.id === id)).toBe(false)
  })

  it('moves a placement live, as the API then returns it, and refuses a matrix that is not rigid', async () => {
    const w = client(cookies.measurer!)
    await synced(w.provider)
    const instances = w.doc.getMap<{ scanId: string; matrix: number[]; visible: boolean; color: string }>(WORK_MAPS.instances)
    await until(() => instances.has(instanceId))
    const moved = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 2, 3, 0, 1]
    instances.set(instanceId, { ...instances.get(instanceId)!, matrix: moved })
    const deadline = Date.now() + 5000
    let matrix: number[] = []
    while (Date.now() < deadline) {
      matrix = (await ownerAgent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances[0].matrix
      if (matrix[12] === 2) break
      await new Promise((r) => setTimeout(r, 50))
    }
    expect(matrix).toEqual(moved)
    const closed = closeEvent(w.provider)
    instances.set(instanceId, { ...instances.get(instanceId)!, matrix: [2, 0, 0, 0, 0, 2, 0, 0, 0, 0, 2, 0, 0, 0, 0, 1] })
    expect(await closed).toMatchObject({ code: CLOSE_CODES.refused, reason: expect.stringMatching(new RegExp(`^placement ${instanceId}: matrix`)) })
    expect((await ownerAgent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances[0].matrix).toEqual(moved)
  })
})

describe('history', () => {
  const at = (x: number) => [
    { instanceId, x, y: 0, z: 0 },
    { instanceId, x: x + 1, y: 0, z: 0 },
  ]

  it('records a revision per API write with its author and full state, and restores an earlier one as a new revision', async () => {
    const m = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: 'first', anchors: at(0) }).expect(201)).body.marker
    await ownerAgent.patch(`/api/markers/${m.id}`).send({ label: 'second' }).expect(200)
    await ownerAgent.patch(`/api/markers/${m.id}`).send({ anchors: at(0.5) }).expect(200)
    const history = (await ownerAgent.get(`/api/markers/${m.id}/history`).expect(200)).body.revisions
    expect(history.map((r: { action: string; state: { label: string } }) => [r.action, r.state.label])).toEqual([
      ['created', 'first'],
      ['edited', 'second'],
      ['edited', 'second'],
    ])
    expect(history[0].by).toMatchObject({ name: 'Live Owner' })
    expect(history[2].state.anchors[0].x).toBeCloseTo(0.5, 12)
    const restored = (await ownerAgent.post(`/api/markers/${m.id}/restore`).send({ revisionId: history[0].id }).expect(200)).body.marker
    expect(restored).toMatchObject({ label: 'first' })
    expect(restored.anchors[0].x).toBeCloseTo(0, 12)
    const after = (await ownerAgent.get(`/api/markers/${m.id}/history`).expect(200)).body.revisions
    expect(after.at(-1)).toMatchObject({ action: 'restored', state: { label: 'first' } })
    // The timeline: the scene as it was between the first and the second edit.
    const between = new Date((Date.parse(history[0].at) + Date.parse(history[1].at)) / 2)
    if (Date.parse(history[1].at) > Date.parse(history[0].at)) {
      const then = (await ownerAgent.get(`/api/scenes/${sceneId}/state`).query({ at: between.toISOString() }).expect(200)).body.revisions
      expect(then.find((r: { markerId: string }) => r.markerId === m.id)).toMatchObject({ action: 'created', state: { label: 'first' } })
    }
    const now = (await ownerAgent.get(`/api/scenes/${sceneId}/state`).query({ at: new Date().toISOString() }).expect(200)).body.revisions
    expect(now.find((r: { markerId: string }) => r.markerId === m.id)).toMatchObject({ action: 'restored', state: { label: 'first' } })
    const badTime = await ownerAgent.get(`/api/scenes/${sceneId}/state`).query({ at: 'yesterday' }).expect(400)
    expect(badTime.body.error.message).toMatch(/^query\.at: must be a time/)
    const bad = await ownerAgent.post(`/api/markers/${m.id}/restore`).send({ revisionId: '999999' }).expect(400)
    expect(bad.body.error.message).toMatch(/^body\.revisionId: no revision/)
  })

  it('records one revision for a run of live edits, once the author leaves the marker alone', async () => {
    const w = client(cookies.measurer!)
    await synced(w.provider)
    const id = '5e0e0000-0000-4000-8000-000000000003'
    for (let i = 0; i < 5; i++) {
      w.markers.set(id, { kind: 'distance', label: `dragging ${i}`, anchors: at(i * 0.1), params: {} })
      await new Promise((r) => setTimeout(r, 40))
    }
    const deadline = Date.now() + 5000 + t.config.liveSettleMs
    let revisions: { action: string; state: { label: string } }[] = []
    while (Date.now() < deadline) {
      const res = await ownerAgent.get(`/api/markers/${id}/history`)
      revisions = res.status === 200 ? res.body.revisions : []
      if (revisions.length > 0) break
      await new Promise((r) => setTimeout(r, 100))
    }
    // Twice the window more: a second revision of the same run would have been written by then.
    await new Promise((r) => setTimeout(r, 2 * t.config.liveSettleMs))
    revisions = (await ownerAgent.get(`/api/markers/${id}/history`).expect(200)).body.revisions
    expect(revisions.map((r) => [r.action, r.state.label])).toEqual([['created', 'dragging 4']])
  })
})

describe('roles, forgeries and reconnecting', () => {
  const anchors = (x: number) => [
    { instanceId, x, y: 0, z: 0 },
    { instanceId, x: x + 1, y: 0, z: 0 },
  ]
  async function apiMarker(id: string) {
    const res = await ownerAgent.get(`/api/markers/${id}`)
    return res.status === 200 ? (res.body.marker as { label: string; check: { state: string; value: number | null }; createdBy: { id: string; name: string } | null; review: { state: string } }) : null
  }

  // The roles table (shared/auth/roles.ts), at the socket: owners and measurers write the work document, mentors do not.
  it.each([
    ['owner', 'stored', true],
    ['measurer', 'stored', true],
    ['mentor', 'refused', false],
  ] as const)('at the socket, a live edit by the %s is %s', async (role, _word, writes) => {
    const made = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: `for the ${role}`, anchors: anchors(2) }).expect(201)).body.marker
    const c = client(cookies[role]!)
    await synced(c.provider)
    await until(() => c.markers.has(made.id))
    c.markers.set(made.id, { kind: 'distance', label: `renamed by the ${role}`, anchors: anchors(2), params: {} })
    const deadline = Date.now() + (writes ? 5000 : 800)
    let label = made.label
    while (Date.now() < deadline) {
      label = (await apiMarker(made.id))!.label
      if (label !== made.label) break
      await new Promise((r) => setTimeout(r, 50))
    }
    expect(label).toBe(writes ? `renamed by the ${role}` : `for the ${role}`)
  })

  it('lets no forged check, author or sign-off of a measurer reach the API, the record or the history (each refused and closed)', async () => {
    const made = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: 'honest', anchors: anchors(3) }).expect(201)).body.marker
    const before = await apiMarker(made.id)
    const historyBefore = (await ownerAgent.get(`/api/markers/${made.id}/history`).expect(200)).body.revisions
    const w = client(cookies.measurer!), r = client(cookies.measurer!, `${sceneId}/record`)
    await Promise.all([synced(w.provider), synced(r.provider)])
    await until(() => w.markers.has(made.id) && r.doc.getMap('markers').has(made.id))
    const recordBefore = JSON.stringify(r.doc.getMap('markers').get(made.id))
    // Into the work document: a check, an author and a review beside the marker's own fields (refused, closed).
    const forgedCheck = { state: 'checked', value: 9.999, expandedUncertainty: 0 }
    let closed = closeEvent(w.provider)
    w.markers.set(made.id, { kind: 'distance', label: 'honest', anchors: anchors(3), params: {}, check: forgedCheck, author: { name: 'Someone Else' }, review: 'signed-off' })
    expect(await closed).toMatchObject({ code: CLOSE_CODES.refused, reason: expect.stringMatching(/Unrecognized key/i) })
    // A marker of its own with the same extras.
    const w2 = client(cookies.measurer!)
    await synced(w2.provider)
    const forgedId = '5e0e0000-0000-4000-8000-0000000000f0'
    closed = closeEvent(w2.provider)
    w2.markers.set(forgedId, { kind: 'distance', label: 'forged', anchors: anchors(4), params: {}, check: forgedCheck, review: 'signed-off' })
    expect((await closed).code).toBe(CLOSE_CODES.refused)
    // Into the record document directly: a check and a sign-off, whole and well formed, as the server writes one.
    const forgedReview = { state: 'signed-off', by: { id: before!.createdBy!.id, name: 'Live Mentor' }, at: new Date().toISOString(), note: 'forged' }
    closed = closeEvent(r.provider)
    r.doc.getMap('markers').set(made.id, { ...JSON.parse(recordBefore), check: { ...forgedCheck }, review: forgedReview })
    expect((await closed).code).toBe(CLOSE_CODES.readOnly)
    await new Promise((res) => setTimeout(res, 400))
    const after = await apiMarker(made.id)
    expect(after).toEqual(before)
    expect(after!.review).toEqual({ state: 'open', by: null, at: null, note: null })
    expect(await apiMarker(forgedId)).toBeNull()
    expect((await ownerAgent.get(`/api/markers/${made.id}/history`).expect(200)).body.revisions).toEqual(historyBefore)
    expect((await ownerAgent.get(`/api/markers/${forgedId}/history`)).status).toBe(404)
    // The record as stored on the server, and as a fresh reader gets it, holds no forgery.
    const stored = await Room.load(t.server.services.db, sceneId, 'record', pino({ level: 'silent' }))
    const entry = stored.doc.getMap('markers').get(made.id) as { check: { value: number | null }; review?: { state: string } }
    expect(entry.check.value).not.toBe(9.999)
    expect(entry.review).toEqual({ state: 'open', by: null, at: null, note: null })
    const fresh = client(cookies.mentor!, `${sceneId}/record`)
    await synced(fresh.provider)
    expect(JSON.stringify(fresh.doc.getMap('markers').get(made.id))).not.toMatch(/9\.999|signed-off|forged/)
    // A later honest change (a rename) brings no forged sign-off back with it.
    await ownerAgent.patch(`/api/markers/${made.id}`).send({ label: 'honest, renamed' }).expect(200)
    expect((await apiMarker(made.id))!.review.state).toBe('open')
    expect((await ownerAgent.get(`/api/markers/${made.id}/history`).expect(200)).body.revisions.some((x: { action: string }) => x.action === 'reviewed')).toBe(false)
  })

  it('merges the edits of a client that was offline for a while with what changed meanwhile', async () => {
    const made = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: 'before the outage', anchors: anchors(5) }).expect(201)).body.marker
    const w = client(cookies.measurer!)
    const other = client(cookies.mentor!)
    await Promise.all([synced(w.provider), synced(other.provider)])
    await until(() => w.markers.has(made.id))
    w.provider.disconnect()
    // Offline: a new marker and a rename, in the document only.
    const offlineId = '5e0e0000-0000-4000-8000-0000000000a1'
    w.markers.set(offlineId, { kind: 'distance', label: 'made offline', anchors: anchors(6), params: {} })
    w.markers.set(made.id, { kind: 'distance', label: 'renamed offline', anchors: anchors(5), params: {} })
    await new Promise((res) => setTimeout(res, 300))
    expect(await apiMarker(offlineId)).toBeNull()
    expect(other.markers.has(offlineId)).toBe(false)
    // Meanwhile another marker is made through the API.
    const meanwhile = (await ownerAgent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', label: 'made meanwhile', anchors: anchors(7) }).expect(201)).body.marker
    w.provider.connect()
    await until(() => w.markers.has(meanwhile.id) && other.markers.has(offlineId), 10_000)
    await until(() => (other.markers.get(made.id) as { label: string }).label === 'renamed offline', 10_000)
    const deadline = Date.now() + 5000
    while (Date.now() < deadline && ((await apiMarker(offlineId)) === null || (await apiMarker(made.id))!.label !== 'renamed offline')) await new Promise((res) => setTimeout(res, 50))
    expect(await apiMarker(offlineId)).toMatchObject({ label: 'made offline', createdBy: { name: 'Live Measurer' } })
    expect((await apiMarker(made.id))!.label).toBe('renamed offline')
  })
})
