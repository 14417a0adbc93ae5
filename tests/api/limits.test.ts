// What one person, project, scene, scan or check may cost the server: each limit reached once, with small
// limits set for this server (config.limits, the upload rate limit) or per project (its settings).
import http from 'node:http'
import supertest from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Marker } from '@shared/schemas'
import { PRODUCTION_LIMITS, PRODUCTION_RATE_LIMITS, workerPointsCeiling } from '../../server/config'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { insertMembership } from '../../server/repositories/memberships'
import { ingestScan } from '../../server/points/ingest'
import { uploadsArriving } from '../../server/services/scans'
import { liveClient, synced } from '../utils/live'
import { upload, waitForScan } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { SurfaceSampler } from '../utils/solids'

const LIMITS = { checkPoints: 500, checksQueuedPerProject: 2, markersPerScene: 6, uploadsInFlightPerProject: 1, ingestAttempts: 3, workerPoints: 1_000_000, nearestCacheBytes: 1 }
const UPLOADS_PER_WINDOW = 4

let t: TestServer
type Person = Awaited<ReturnType<typeof signUpAgent>>
let owner: Person
let projectId: string
let scanId: string

/** A 1 m square plate in the x-z plane on a 2 cm grid: 51 x 51 = 2601 points. */
const plate = () => new SurfaceSampler(0.02, 0.001, 5).rect([0, 0, 0], [1, 0, 0], 1, [0, 0, 1], 1).ply()

function plyOf(count: number): Buffer {
  const positions = new Float64Array(count * 3)
  for (let i = 0; i < count; i++) positions.set([(i % 50) * 0.01, Math.floor(i / 50) * 0.01, 0], i * 3)
  return writeBinaryPly({ count, positions })
}

/** A session cookie of the person's own, for a raw request or a live socket. */
async function cookieOf(p: Person): Promise<string> {
  const signedIn = await supertest(t.url).post('/api/auth/sign-in').set('Origin', t.url).send({ email: p.email, password: p.password }).expect(200)
  return String(signedIn.headers['set-cookie']![0]).split(';')[0]!
}

async function newProject(p: Person, name: string): Promise<string> {
  return (await p.agent.post('/api/projects').send({ name }).expect(201)).body.project.id
}

/** A scene of `projectId` with the scan placed where it stands. */
async function sceneWithPlate(p: Person, project: string, scan: string): Promise<{ sceneId: string; instanceId: string }> {
  const sceneId = (await p.agent.post(`/api/projects/${project}/scenes`).send({ name: 'Plate' }).expect(201)).body.scene.id
  const matrix = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
  const instanceId = (await p.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan, matrix }).expect(201)).body.instance.id
  return { sceneId, instanceId }
}

const distance = (instanceId: string, i: number) => ({
  kind: 'distance',
  anchors: [
    { instanceId, x: 0.1, y: 0, z: 0.1 + i * 0.05 },
    { instanceId, x: 0.9, y: 0, z: 0.1 + i * 0.05 },
  ],
})

/** Processes a scan in this process, as the worker would (no worker runs here: no queue to wait for). */
function ingest(id: string, workerPoints?: number) {
  const { db, objects, log } = t.server.services
  return ingestScan({ db, objects, log, lazLimitBytes: t.config.uploads.lazLimitBytes, staleMs: t.config.ingestStaleMs, maxAttempts: LIMITS.ingestAttempts, workerPoints }, id)
}

async function readyScan(p: Person, project: string, bytes: Buffer, name: string): Promise<string> {
  const id = (await upload(p.agent, project, bytes, name).expect(202)).body.scan.id as string
  await ingest(id)
  const scan = (await p.agent.get(`/api/scans/${id}`).expect(200)).body.scan
  expect(scan.status, scan.error ?? '').toBe('ready')
  return id
}

async function ingested(p: Person, id: string) {
  await ingest(id)
  return (await p.agent.get(`/api/scans/${id}`).expect(200)).body.scan
}

beforeAll(async () => {
  t = await startTestServer({ limits: LIMITS, rateLimits: { ...PRODUCTION_RATE_LIMITS, upload: { windowMs: 60_000, limit: UPLOADS_PER_WINDOW } } }, {})
  owner = await signUpAgent(t, 'Limit Owner')
  projectId = await newProject(owner, 'Limits')
  scanId = await readyScan(owner, projectId, plate(), 'plate.ply')
}, 60_000)

afterAll(async () => {
  await t?.stop()
})

it('states the production limits it documents', () => {
  // README "Security and limits" lists these numbers; a change here must change it too.
  expect(PRODUCTION_LIMITS).toEqual({ checkPoints: 10_000_000, checksQueuedPerProject: 200, markersPerScene: 2000, uploadsInFlightPerProject: 3, ingestAttempts: 3, workerPoints: expect.any(Number), nearestCacheBytes: 1024 ** 3 })
  // The worker's ceiling: half the machine's memory at 48 bytes a point (24 GiB: 268,435,456 points).
  if (!process.env.WORKER_MAX_POINTS) expect(PRODUCTION_LIMITS.workerPoints).toBe(workerPointsCeiling())
  expect(workerPointsCeiling(24 * 1024 ** 3)).toBe(268_435_456)
  expect(PRODUCTION_RATE_LIMITS.upload).toEqual({ windowMs: 3_600_000, limit: 60 })
})

describe('markers and checks', () => {
  let sceneId: string
  let instanceId: string
  beforeAll(async () => {
    ;({ sceneId, instanceId } = await sceneWithPlate(owner, projectId, scanId))
  })

  it('refuses a marker beyond the scene\'s limit with 409 saying the limit and what to do', async () => {
    for (let i = 0; i < LIMITS.markersPerScene; i++) await owner.agent.post(`/api/scenes/${sceneId}/markers`).send(distance(instanceId, i)).expect(201)
    const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send(distance(instanceId, 9)).expect(409)
    expect(res.body.error.message).toContain(`the most a scene may hold (${LIMITS.markersPerScene})`)
    expect(res.body.error.message).toMatch(/Delete markers .* or place the new ones in another scene/)
    const list = await owner.agent.get(`/api/scenes/${sceneId}/markers`).expect(200)
    expect(list.body.markers).toHaveLength(LIMITS.markersPerScene)
  })

  it('refuses a new marker beyond the limit through the live document too', async () => {
    const cookie = await cookieOf(owner)
    const w = liveClient(t.url, cookie, sceneId)
    try {
      await synced(w.provider)
      const id = '5e0e0000-0000-4000-8000-00000000c0de'
      const entry = distance(instanceId, 10)
      w.markers.set(id, { kind: 'distance', label: 'one too many', anchors: entry.anchors, params: {} })
      // Refused: put back out of the document (or the socket closed on it).
      for (let i = 0; i < 100 && w.markers.has(id) && w.provider.wsconnected; i++) await new Promise((r) => setTimeout(r, 50))
      const list = (await owner.agent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers as Marker[]
      expect(list.map((m) => m.id)).not.toContain(id)
      expect(list).toHaveLength(LIMITS.markersPerScene)
    } finally {
      w.provider.destroy()
      w.doc.destroy()
    }
  })

  it('keeps the nearest-point tiles of every scan in one byte budget: a tile of another scan pushes the oldest out', async () => {
    // The budget here is 1 byte: the newest tile is always kept (a search works on it), everything older goes.
    const second = await readyScan(owner, projectId, plate(), 'second plate.ply')
    const indexes = t.server.services.scanIndexes
    await indexes.clearCaches()
    const a = await indexes.snap(scanId, 0.5, 0.01, 0.5)
    const afterA = indexes.cacheUse
    expect(a).toMatchObject({ x: expect.closeTo(0.5, 6), z: expect.closeTo(0.5, 6) })
    expect(afterA.tiles).toBeGreaterThan(0)
    const b = await indexes.snap(second, 0.5, 0.01, 0.5)
    expect(b).toMatchObject({ x: expect.closeTo(0.5, 6), z: expect.closeTo(0.5, 6) })
    expect(indexes.cacheUse).toMatchObject({ maxBytes: LIMITS.nearestCacheBytes, tiles: 1 })
    // The first scan's tile left to make room: asking it again still finds the point (read again).
    expect(await indexes.snap(scanId, 0.5, 0.01, 0.5)).toEqual(a)
    expect(indexes.cacheUse.tiles).toBe(1)
  })

  it('ends a section whose slab holds more points than one check may read in a state with the reason', async () => {
    const other = await sceneWithPlate(owner, projectId, scanId)
    // A vertical plane through two points of the plate is the plate's own plane: all 2601 points lie in the slab.
    const res = await owner.agent
      .post(`/api/scenes/${other.sceneId}/markers`)
      .send({ kind: 'section', anchors: [{ instanceId: other.instanceId, x: 0.2, y: 0, z: 0.5 }, { instanceId: other.instanceId, x: 0.8, y: 0, z: 0.5 }], params: { plane: 'two-points', thickness: 0.05, opening: false } })
      .expect(201)
    const m = res.body.marker as Marker
    expect(m.check.state).toBe('invalid-geometry')
    expect(m.check.reason).toContain(`more than ${LIMITS.checkPoints} stored points, the most one check reads`)
    expect(m.check.reason).toContain('make the slab thinner')
  })

  it('holds at most the cap of one project\'s checks in the queue, takes projects in turn, and loses none', async () => {
    // Project A: two scenes of six markers (12 re-checks); project B: one marker, asked for after A's.
    const a2 = await sceneWithPlate(owner, projectId, scanId)
    for (let i = 0; i < LIMITS.markersPerScene; i++) await owner.agent.post(`/api/scenes/${a2.sceneId}/markers`).send(distance(a2.instanceId, i)).expect(201)
    const other = await signUpAgent(t, 'Other Owner')
    const projectB = await newProject(other, 'Other')
    const scanB = await readyScan(other, projectB, plate(), 'plate.ply')
    const b = await sceneWithPlate(other, projectB, scanB)
    const markerB = (await other.agent.post(`/api/scenes/${b.sceneId}/markers`).send(distance(b.instanceId, 0)).expect(201)).body.marker.id as string
    const checker = t.server.services.markerChecks
    await checker.idle()

    const order: string[] = []
    let mostQueued = 0
    const stored = checker.onStored
    checker.onStored = async (scene, marker) => {
      order.push(marker)
      mostQueued = Math.max(mostQueued, checker.queuedFor(projectId))
      await stored?.(scene, marker)
    }
    try {
      await owner.agent.patch(`/api/projects/${projectId}`).send({ anchorTolerance: 0.02 }).expect(200)
      await other.agent.patch(`/api/projects/${projectB}`).send({ anchorTolerance: 0.02 }).expect(200)
      await checker.idle()
      // Markers left out of a full queue are read back from PostgreSQL as room frees.
      for (let i = 0; i < 100 && (await t.server.services.db.selectFrom('markers').select('id').where('check_state', '=', 'pending').execute()).length; i++) {
        await new Promise((r) => setTimeout(r, 50))
        await checker.idle()
      }
    } finally {
      checker.onStored = stored
    }
    const pending = await t.server.services.db.selectFrom('markers').select('id').where('check_state', '=', 'pending').execute()
    expect(pending, 'every re-check ran in the end').toEqual([])
    const markersOfA = (await owner.agent.get(`/api/scenes/${a2.sceneId}/markers`).expect(200)).body.markers as Marker[]
    expect(order).toEqual(expect.arrayContaining(markersOfA.map((m) => m.id)))
    expect(mostQueued, 'project A never held more than its cap in the queue').toBeLessThanOrEqual(LIMITS.checksQueuedPerProject)
    // First come, first served would check B's one marker after all 12 of A's.
    expect(order.indexOf(markerB), `B checked at ${order.indexOf(markerB)} of ${order.length}`).toBeGreaterThanOrEqual(0)
    expect(order.indexOf(markerB)).toBeLessThan(LIMITS.checksQueuedPerProject + 2)
  })
})

describe('uploads', () => {
  it('limits uploads per person, saying the limit and when to try again', async () => {
    const p = await signUpAgent(t, 'Busy Uploader')
    const project = await newProject(p, 'Busy')
    for (let i = 0; i < UPLOADS_PER_WINDOW; i++) await upload(p.agent, project, plyOf(10), `s${i}.ply`).expect(202)
    const res = await upload(p.agent, project, plyOf(10), 'one-more.ply').expect(429)
    expect(res.body.error.message).toMatch(new RegExp(`Too many uploads from you \\(at most ${UPLOADS_PER_WINDOW} in 1 minutes per person or rig key\\)\\. Try again in 1 minutes\\.`))
    // Another person is counted on their own.
    const q = await signUpAgent(t, 'Calm Uploader')
    await upload(q.agent, await newProject(q, 'Calm'), plyOf(10), 'mine.ply').expect(202)
  })

  it('takes one upload per project at a time here, refusing the next with 429 until the first is done', async () => {
    const p = await signUpAgent(t, 'Parallel Uploader')
    const project = await newProject(p, 'Parallel')
    const cookie = await cookieOf(p)
    // A slow upload: headers and the first part of the body, then nothing until the test ends it.
    const boundary = 'spanmarklimitboundary'
    const slow = http.request(`${t.url}/api/projects/${project}/scans`, {
      method: 'POST',
      headers: { Origin: t.url, Cookie: cookie, 'Content-Type': `multipart/form-data; boundary=${boundary}`, 'Content-Length': String(1024 * 1024) },
    })
    slow.on('error', () => {})
    slow.write(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="slow.xyz"\r\nContent-Type: application/octet-stream\r\n\r\n0 0 0\n`)
    // Once the server counts it as arriving (trying before would spend this person's uploads per minute):
    for (let i = 0; i < 200 && uploadsArriving(t.server.services, project) < 1; i++) await new Promise((r) => setTimeout(r, 10))
    const res = await upload(p.agent, project, plyOf(10), 'second.ply')
    expect(res.status).toBe(429)
    expect(res.body.error.message).toBe(`This project already has 1 uploads arriving, the most it takes at once (${LIMITS.uploadsInFlightPerProject}). Wait for one of them to finish, then send this file again.`)
    slow.destroy()
    let after = await upload(p.agent, project, plyOf(10), 'third.ply')
    for (let i = 0; i < 40 && after.status === 429; i++) {
      await new Promise((r) => setTimeout(r, 25))
      after = await upload(p.agent, project, plyOf(10), 'third.ply')
    }
    expect(after.status, 'the slot frees when the slow upload ends').toBe(202)
  })

  it('holds a project to its daily quota, deleted scans included, set by its owner', async () => {
    const p = await signUpAgent(t, 'Quota Owner')
    const project = await newProject(p, 'Quota')
    const got = (await p.agent.get(`/api/projects/${project}`).expect(200)).body.project
    expect(got.uploadSettings).toEqual({ dailyUploadBytes: 200 * 1024 ** 3, maxScanPoints: 500_000_000 })
    const tooSmall = await p.agent.patch(`/api/projects/${project}`).send({ dailyUploadBytes: 1000 }).expect(400)
    expect(tooSmall.body.error.message).toBe('body.dailyUploadBytes: must be at least 1 MiB')
    await p.agent.patch(`/api/projects/${project}`).send({ dailyUploadBytes: 1024 ** 2 }).expect(200)
    const first = await upload(p.agent, project, plyOf(25_000), 'a.ply').expect(202) // 600 KB
    await p.agent.delete(`/api/scans/${first.body.scan.id}`).expect(204)
    const res = await upload(p.agent, project, plyOf(25_000), 'b.ply').expect(429)
    expect(res.body.error.message).toMatch(/^This project's upload quota is 1 MiB a day \(any 24 hours\); it has received 5\d\d(\.\d+)? KiB, so .* is left and this file \(5\d\d(\.\d+)? KiB\) does not fit\. Send it later, or ask the project's owner to raise the daily upload quota in the project's settings\.$/)
    const scans = (await p.agent.get(`/api/projects/${project}/scans`).expect(200)).body.scans
    expect(scans).toEqual([])
    // Only the owner sets it.
    const measurer = await signUpAgent(t, 'Quota Measurer')
    await insertMembership(t.server.services.db, project, measurer.user.id, 'measurer')
    await measurer.agent.patch(`/api/projects/${project}`).send({ dailyUploadBytes: 2 * 1024 ** 2 }).expect(403)
  })

  it('fails a scan over the project\'s point limit with the limit and how to split the file, from the header or while reading', async () => {
    const p = await signUpAgent(t, 'Point Owner')
    const project = await newProject(p, 'Points')
    await p.agent.patch(`/api/projects/${project}`).send({ maxScanPoints: 1000 }).expect(200)
    const fromHeader = (await upload(p.agent, project, plyOf(2500), 'big.ply').expect(202)).body.scan.id
    // XYZ has no count: reading stops once the 1001st point arrives.
    const lines = Array.from({ length: 1500 }, (_, i) => `${i * 0.01} 0 0`).join('\n')
    const streamed = (await upload(p.agent, project, Buffer.from(lines), 'big.xyz').expect(202)).body.scan.id
    // A header that declares two billion points on a tiny body fails from the header, before anything is sized.
    const lying = Buffer.concat([Buffer.from('ply\nformat binary_little_endian 1.0\nelement vertex 2000000000\nproperty double x\nproperty double y\nproperty double z\nend_header\n'), Buffer.alloc(240)])
    const liar = (await upload(p.agent, project, lying, 'liar.ply').expect(202)).body.scan.id
    const fits = (await upload(p.agent, project, plyOf(1000), 'fits.ply').expect(202)).body.scan.id

    const a = await ingested(p, fromHeader)
    expect(a.status).toBe('failed')
    expect(a.error).toBe(
      'The scan has more points than this project allows: its header declares 2,500 points, and the limit per scan is 1,000. To load it, split the file into parts of at most that many points (for example by area, with the tool that wrote it) and upload each part as its own scan, or ask the project\'s owner to raise "Points per scan" in the project\'s settings.',
    )
    const b = await ingested(p, streamed)
    expect(b.status).toBe('failed')
    expect(b.error).toContain('reading stopped after 1,000 points, with more to come, and the limit per scan is 1,000. To load it, split the file into parts of at most that many lines')
    const c = await ingested(p, liar)
    expect(c.error).toContain('its header declares 2,000,000,000 points, and the limit per scan is 1,000')
    const d = await ingested(p, fits)
    expect(d.status, d.error ?? '').toBe('ready')
    expect(d.pointCount).toBe(1000)
  })

  it('fails a scan over the worker\'s memory ceiling, below the project\'s limit, saying it is the server\'s', async () => {
    const p = await signUpAgent(t, 'Ceiling Owner')
    const project = await newProject(p, 'Ceiling')
    const heavy = (await upload(p.agent, project, plyOf(900), 'heavy.ply').expect(202)).body.scan.id
    await ingest(heavy, 600)
    const e = (await p.agent.get(`/api/scans/${heavy}`).expect(200)).body.scan
    expect(e.status).toBe('failed')
    expect(e.error).toContain('its header declares 900 points, and its ingest worker holds at most 600 points of a scan in memory')
  })

  it('fails a scan whose processing stopped on its last attempt, queues one with attempts left, and replaces a stalled worker', async () => {
    const p = await signUpAgent(t, 'Attempt Owner')
    const project = await newProject(p, 'Attempts')
    const db = t.server.services.db
    const spent = await readyScan(p, project, plyOf(100), 'spent.ply')
    const again = await readyScan(p, project, plyOf(100), 'again.ply')
    // This server's worker, as the sweeper sees it (none runs here: a stand-in records the restart).
    const restarts: string[] = []
    Object.defineProperty(t.server, 'workers', { value: [{ claimName: 'rig-host:4242', restart: () => restarts.push('restart') }], configurable: true })
    try {
      // As a worker leaves them when it dies or hangs: processing, an old heartbeat. The second is held by
      // this server's own worker, which is still running: it stalled.
      const old = new Date(Date.now() - 60_000)
      await db.updateTable('scans').set({ status: 'processing', heartbeat_at: old, attempts: LIMITS.ingestAttempts, claimed_by: 'elsewhere:1' }).where('id', '=', spent).execute()
      await db.updateTable('scans').set({ status: 'processing', heartbeat_at: old, attempts: 1, claimed_by: 'rig-host:4242' }).where('id', '=', again).execute()

      const failed = (await waitForScan(p.agent, spent, (s) => s.status !== 'processing', 10_000)).scan
      expect(failed.status).toBe('failed')
      expect(failed.error).toBe(
        `Processing stopped ${LIMITS.ingestAttempts} times without finishing (the worker crashed or stalled each time), so the scan was given up to keep the queue moving. The file may be damaged or too large for the worker's memory: check it, or split it into smaller parts, and upload it again.`,
      )
      const queued = (await waitForScan(p.agent, again, (s) => s.status !== 'processing', 10_000)).scan
      expect(queued.status).toBe('queued')
      expect(restarts, 'the stalled worker is replaced').toEqual(['restart'])
      // A duplicate job for the failed scan is skipped; the queued one is processed (its second attempt).
      expect(await ingest(spent)).toBe('skipped')
      expect((await ingested(p, again)).status).toBe('ready')
      const row = await db.selectFrom('scans').select('attempts').where('id', '=', again).executeTakeFirstOrThrow()
      expect(row.attempts).toBe(2)
    } finally {
      Object.defineProperty(t.server, 'workers', { value: [], configurable: true })
    }
  })
})

describe('rig keys', () => {
  it('expire when the owner chose, record their last use, and stop working when their maker leaves', async () => {
    const maker = await signUpAgent(t, 'Key Maker')
    await insertMembership(t.server.services.db, projectId, maker.user.id, 'owner')
    const made = await maker.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'Tripod rig', expiresInDays: 7 }).expect(201)
    const days = (Date.parse(made.body.token.expiresAt) - Date.now()) / 86_400_000
    expect(days).toBeGreaterThan(6.99)
    expect(days).toBeLessThanOrEqual(7)
    const byDefault = await owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'Spare rig' }).expect(201)
    expect(Math.round((Date.parse(byDefault.body.token.expiresAt) - Date.now()) / 86_400_000)).toBe(90)
    const tooLong = await owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'Forever', expiresInDays: 1000 }).expect(400)
    expect(tooLong.body.error.message).toBe('body.expiresInDays: must be at most 365 days')

    const rigUpload = (secret: string) => t.agent().post(`/api/projects/${projectId}/scans`).set('Authorization', `Bearer ${secret}`).attach('file', plyOf(10), 'rig.ply')
    await rigUpload(made.body.secret).expect(202)
    let keys = (await owner.agent.get(`/api/projects/${projectId}/upload-tokens`).expect(200)).body.tokens
    expect(keys.find((k: { id: string }) => k.id === made.body.token.id).lastUsedAt).not.toBeNull()
    expect(keys.find((k: { id: string }) => k.id === byDefault.body.token.id).lastUsedAt).toBeNull()

    // The maker leaves: the key stops at its next use, and the list says why.
    await owner.agent.delete(`/api/projects/${projectId}/members/${maker.user.id}`).expect(204)
    const gone = await rigUpload(made.body.secret).expect(401)
    expect(gone.body.error.message).toBe('This rig key stopped working: the person who made it is no longer a member of the project. Ask a project owner for a new key.')
    keys = (await owner.agent.get(`/api/projects/${projectId}/upload-tokens`).expect(200)).body.tokens
    expect(keys.find((k: { id: string }) => k.id === made.body.token.id).makerLeft).toBe(true)

    // Expired: its date passed.
    await t.server.services.db.updateTable('upload_tokens').set({ expires_at: new Date('2026-01-02T00:00:00Z') }).where('id', '=', byDefault.body.token.id).execute()
    const expired = await rigUpload(byDefault.body.secret).expect(401)
    expect(expired.body.error.message).toBe('This rig key expired on 2026-01-02. Ask a project owner for a new key.')
  })
})
