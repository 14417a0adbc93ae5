// PostgreSQL restarted under load, on a cluster of this file's own (the shared test cluster is not touched):
// two server processes with live clients on both keep taking edits while the database is away, and recover
// by themselves once it is back (pools open new connections, the fan-out listens again and catches up,
// held live updates are stored in order): every client and the database end with the same markers.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { isDeepStrictEqual } from 'node:util'
import { afterAll, beforeAll, expect, it } from 'vitest'
import supertest from 'supertest'
import pino from 'pino'
import type { WebsocketProvider } from 'y-websocket'
import { WORK_MAPS } from '@shared/collab/documents'
import { findPgBin, freePort, startCluster, stopCluster } from '../../scripts/lib/postgres.mjs'
import { Room } from '../../server/collab/room'
import { liveClient, synced, type LiveClient } from '../utils/live'
import { joinProject, signUpAgent, startPeer, startTestServer, type TestServer } from '../utils/server'

const bin = findPgBin()!
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-pg-restart-'))
fs.chmodSync(tmp, 0o755)
const dataDir = path.join(tmp, 'pg')
let port = 0
let a: TestServer
let b: Awaited<ReturnType<typeof startPeer>>
let sceneId: string
let instanceId: string
const open: WebsocketProvider[] = []

async function until(check: () => boolean | Promise<boolean>, ms: number, what: string): Promise<void> {
  const end = Date.now() + ms
  while (!(await Promise.resolve().then(check).catch(() => false))) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 50))
  }
}
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))
const markerId = (c: number, i: number) => `5e0e0000-0000-4000-8000-${String(c * 1000 + i).padStart(12, '0')}`
const entry = (label: string, x = 0) => ({ kind: 'distance', label, anchors: [{ instanceId, x, y: 0, z: 0 }, { instanceId, x: x + 1, y: 0, z: 0 }], params: {} })
async function cookieOf(url: string, email: string, password: string): Promise<string> {
  const res = await supertest(url).post('/api/auth/sign-in').set('Origin', url).send({ email, password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}

beforeAll(async () => {
  port = await freePort()
  const cluster = await startCluster({ bin, dataDir, port, database: 'spanmark_restart' })
  a = await startTestServer({ databaseUrl: cluster.url })
  b = await startPeer(a)
  const owner = await signUpAgent(a, 'Restart Owner')
  const measurer = await signUpAgent(a, 'Restart Measurer')
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Restarts' }).expect(201)).body.project.id
  await joinProject(a, owner.agent, projectId, measurer, 'measurer')
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Restart scene' }).expect(201)).body.scene.id
  const scan = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'three.xyz').expect(202)
  await a.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id
  const cookies = await Promise.all([cookieOf(a.url, owner.email, owner.password), cookieOf(b.url, measurer.email, measurer.password)])
  for (const [i, url] of [a.url, b.url].entries()) {
    const c = liveClient(url, cookies[i]!, sceneId)
    open.push(c.provider)
  }
}, 60_000)
afterAll(async () => {
  for (const p of open) p.destroy()
  await b?.stop()
  await a?.stop()
  stopCluster({ bin, dataDir })
  fs.rmSync(tmp, { recursive: true, force: true })
})

it('recovers by itself from a PostgreSQL restart under load, and the clients converge with the database', { timeout: 60_000 }, async () => {
  const clients: LiveClient[] = open.map((provider) => ({ provider, doc: provider.doc, markers: provider.doc.getMap<unknown>(WORK_MAPS.markers) }))
  await Promise.all(clients.map((c) => synced(c.provider)))
  const made = new Set<string>()
  let i = 0
  let editing = true
  // Both clients edit every 40 ms throughout: before, during and after the restart.
  const load = (async () => {
    while (editing) {
      for (const [c, client] of clients.entries()) {
        client.markers.set(markerId(c, i), entry(`client ${c} edit ${i}`, i % 10))
        made.add(markerId(c, i))
      }
      i++
      await sleep(40)
    }
  })()
  await sleep(400)
  // pg_ctl stop -m fast: every session is terminated (57P01), as in a restart; then the same cluster starts again.
  stopCluster({ bin, dataDir })
  await sleep(1500)
  await startCluster({ bin, dataDir, port, database: 'spanmark_restart' })
  await sleep(600)
  editing = false
  await load
  expect(made.size).toBeGreaterThan(40)
  // The fan-out listens again and the edits cross; both clients and the stored document agree.
  await until(() => clients.every((c) => c.markers.size === made.size) && isDeepStrictEqual(clients[0]!.markers.toJSON(), clients[1]!.markers.toJSON()), 20_000, 'both clients to hold every edit').catch(async (err: Error) => {
    const rooms = [a, b].map((s) => s.server.collab['rooms'].get(`${sceneId}:work`))
    const info = await Promise.all(rooms.map(async (r) => { const room = await r; return room ? `pending ${!!room.doc.store.pendingStructs} ${!!room.doc.store.pendingDs} size ${room.doc.getMap(WORK_MAPS.markers).size}` : 'none' }))
    const cl = clients.map((c) => `pending ${!!c.doc.store.pendingStructs} ${!!c.doc.store.pendingDs}`)
    throw new Error(`${err.message}: rooms ${info.join('; ')}; clients ${cl.join('; ')}; ${made.size} made, clients hold ${clients.map((c) => `${c.markers.size} (${c.provider.wsconnected ? 'connected' : 'not connected'})`).join(', ')}`)
  })
  const stored = async () => (await Room.load(a.server.services.db, sceneId, 'work', pino({ level: 'silent' }))).doc.getMap(WORK_MAPS.markers).toJSON()
  await until(async () => isDeepStrictEqual(await stored(), clients[0]!.markers.toJSON()), 15_000, 'the stored document to hold what the clients hold')
  // The markers table too (changes whose mirror failed while the database was away are written on recovery).
  const ids = async () => (await a.server.services.db.selectFrom('markers').select('id').where('scene_id', '=', sceneId).execute()).map((r) => r.id).sort()
  await until(async () => isDeepStrictEqual(await ids(), [...made].sort()), 15_000, 'every marker in the markers table')
  // And the REST side answers again on both processes.
  for (const s of [a, b]) expect((await supertest(s.url).get('/api/health')).status).toBeLessThan(500)
})
