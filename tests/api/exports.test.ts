// Exports through the API with a real worker: a scene of two placements of one processed scan, exported as
// LAS 1.4, E57 and PLY, downloaded, and read back with the project's readers against the stored points
// (fetched through the tiles route, an independent path to the same data). Precision per format: LAS within
// half its scale (ASPRS LAS 1.4 R15: X = X_record x scale + offset), E57 float64 exact, PLY float32.
import fs from 'node:fs'
import { Matrix4, Vector3 } from 'three'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { decodeTile } from '@shared/points/tileFormat'
import type { Export } from '@shared/schemas'
import { memorySource } from '../../server/points/readers/byteSource'
import { openE57 } from '../../server/points/readers/e57Reader'
import { readAll, type LasHeaderInfo } from '../../server/points/readers/index'
import { upload, waitForScan } from '../utils/scans'
import { guestAgent, joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let mentor: Awaited<ReturnType<typeof signUpAgent>>
let outsider: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
let scanId: string
let sceneId: string
const placements: { id: string; matrix: number[] }[] = []
/** The stored points of the scan (its own frame), tile by tile in the hierarchy's order. */
let stored: { positions: number[]; intensities: number[] }

const turned = new Matrix4().makeRotationZ(Math.PI / 3).setPosition(20.25, -4.5, 1.125).elements

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Export Owner')
  mentor = await signUpAgent(t, 'Export Mentor')
  outsider = await signUpAgent(t, 'Export Outsider')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Granary survey' }).expect(201)).body.project.id
  await joinProject(t, owner.agent, projectId, mentor, 'mentor')
  scanId = (await upload(owner.agent, projectId, fs.readFileSync('tests/fixtures/crate.las'), 'crate.las').expect(202)).body.scan.id
  await waitForScan(owner.agent, scanId)
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Granary loft' }).expect(201)).body.scene.id
  for (const matrix of [new Matrix4().elements, turned]) {
    const res = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix }).expect(201)
    placements.push({ id: res.body.instance.id, matrix })
  }
  const hierarchy = (await owner.agent.get(`/api/scans/${scanId}/hierarchy`).expect(200)).body
  stored = { positions: [], intensities: [] }
  for (const node of hierarchy.nodes as { key: string }[]) {
    const res = await owner.agent.get(`/api/scans/${scanId}/tiles/${node.key}`).buffer(true).parse((r, done) => {
      const parts: Buffer[] = []
      r.on('data', (c: Buffer) => parts.push(c))
      r.on('end', () => done(null, Buffer.concat(parts)))
    })
    const tile = decodeTile(new Uint8Array(res.body as Buffer))
    for (let i = 0; i < tile.count; i++) {
      for (let a = 0; a < 3; a++) stored.positions.push(tile.origin[a]! + tile.positions[i * 3 + a]!)
      stored.intensities.push(tile.intensities?.[i] ?? 0)
    }
  }
})
afterAll(async () => {
  await t?.stop()
})

/** Polls until ready or failed; returns every progress seen. */
async function waitForExport(agent: ReturnType<TestServer['agent']>, id: string): Promise<{ done: Export; seen: number[] }> {
  const seen: number[] = []
  const deadline = Date.now() + 30_000
  for (;;) {
    const e = (await agent.get(`/api/exports/${id}`).expect(200)).body.export as Export
    seen.push(e.progress)
    if (e.status === 'ready' || e.status === 'failed') return { done: e, seen }
    if (Date.now() > deadline) throw new Error(`export ${id} still ${e.status} after 30 s`)
    await new Promise((r) => setTimeout(r, 20))
  }
}

async function download(agent: ReturnType<TestServer['agent']>, id: string) {
  const res = await agent
    .get(`/api/exports/${id}/file`)
    .buffer(true)
    .parse((r, done) => {
      const parts: Buffer[] = []
      r.on('data', (c: Buffer) => parts.push(c))
      r.on('end', () => done(null, Buffer.concat(parts)))
    })
  return res
}

/** The stored points moved by a placement's matrix, in the export's order (placements in turn). */
function expectedScene(): number[] {
  const out: number[] = []
  const v = new Vector3()
  for (const p of placements) {
    const m = new Matrix4().fromArray(p.matrix)
    for (let i = 0; i < stored.positions.length; i += 3) {
      v.set(stored.positions[i]!, stored.positions[i + 1]!, stored.positions[i + 2]!).applyMatrix4(m)
      out.push(v.x, v.y, v.z)
    }
  }
  return out
}

describe('exports', () => {
  it('LAS 1.4 of the scene: progress reaches 1, the file holds both placements within half the scale', async () => {
    const created = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'las' }).expect(202)
    expect(created.body.export).toMatchObject({ status: 'queued', progress: 0, source: 'scene', format: 'las', fileName: 'Granary-loft.las' })
    const { done, seen } = await waitForExport(owner.agent, created.body.export.id)
    expect(done.error).toBeNull()
    expect(done.status).toBe('ready')
    expect(done.progress).toBe(1)
    for (let i = 1; i < seen.length; i++) expect(seen[i]!).toBeGreaterThanOrEqual(seen[i - 1]!)
    expect(done.pointCount).toBe(2 * 5220)
    // A mentor downloads it; the list shows it.
    const res = await download(mentor.agent, done.id)
    expect(res.status).toBe(200)
    expect(res.headers['content-disposition']).toContain("filename*=UTF-8''Granary-loft.las")
    const bytes = new Uint8Array(res.body as Buffer)
    expect(bytes.length).toBe(done.byteSize)
    const las = await readAll(bytes, 'las')
    const h = las.header as LasHeaderInfo
    expect([h.version, h.pointFormat, h.pointCount, h.legacyPointCount]).toEqual(['1.4', 6, 10440, 0])
    const expected = expectedScene()
    let worst = 0
    for (let i = 0; i < expected.length; i++) worst = Math.max(worst, Math.abs(las.positions[i]! - expected[i]!))
    expect(worst).toBeLessThanOrEqual(h.scale[0] / 2 + 1e-9)
    expect(Array.from(las.intensities!.subarray(0, 5220))).toEqual(stored.intensities)
    const list = (await owner.agent.get(`/api/scenes/${sceneId}/exports`).expect(200)).body.exports as Export[]
    expect(list.map((e) => e.id)).toContain(done.id)
  })

  it('E57 of one placement: its points exact in the scan frame, the placement kept as the pose', async () => {
    const created = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'e57', instanceId: placements[1]!.id }).expect(202)
    const { done } = await waitForExport(owner.agent, created.body.export.id)
    expect(done).toMatchObject({ status: 'ready', source: 'placement', pointCount: 5220, fileName: 'Granary-loft_crate.e57' })
    const bytes = new Uint8Array((await download(owner.agent, done.id)).body as Buffer)
    const file = await openE57(memorySource(bytes))
    expect(file.header.scans).toHaveLength(1)
    expect(file.header.scans[0]!.pose.translation).toEqual([20.25, -4.5, 1.125])
    const got: number[] = []
    await file.readScan(0, { applyPose: false, onBatch: (b) => got.push(...b.positions) })
    expect(got).toEqual(stored.positions)
  })

  it('PLY of the scene: float coordinates, within float32 rounding', async () => {
    const created = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'ply' }).expect(202)
    const { done } = await waitForExport(owner.agent, created.body.export.id)
    expect(done.status).toBe('ready')
    const bytes = new Uint8Array((await download(owner.agent, done.id)).body as Buffer)
    expect(new TextDecoder().decode(bytes.subarray(0, 300))).toContain('property float x')
    const ply = await readAll(bytes, 'ply')
    expect(Array.from(ply.positions)).toEqual(expectedScene().map(Math.fround))
  })

  it('refuses LAS where the placements spread beyond what int32 holds at 1 mm, naming the axis', async () => {
    const wide = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Two sites' }).expect(201)).body.scene.id
    await owner.agent.post(`/api/scenes/${wide}/instances`).send({ scanId }).expect(201)
    await owner.agent.post(`/api/scenes/${wide}/instances`).send({ scanId, matrix: new Matrix4().setPosition(0, 5_000_000, 0).elements }).expect(201)
    const created = await owner.agent.post(`/api/scenes/${wide}/exports`).send({ format: 'las' }).expect(202)
    const { done } = await waitForExport(owner.agent, created.body.export.id)
    expect(done.status).toBe('failed')
    expect(done.error).toMatch(/spread 5000\.\d km along y/)
    const res = await owner.agent.get(`/api/exports/${done.id}/file`).expect(409)
    expect(res.body.error.message).toMatch(/failed.*along y/)
    // The same scene as E57 keeps each placement in its own frame: nothing to refuse.
    const e57 = await owner.agent.post(`/api/scenes/${wide}/exports`).send({ format: 'e57' }).expect(202)
    expect((await waitForExport(owner.agent, e57.body.export.id)).done.status).toBe('ready')
    // Deleting the scene takes its export files out of object storage too.
    const { object_key: key } = await t.server.services.db.selectFrom('exports').select('object_key').where('id', '=', e57.body.export.id).executeTakeFirstOrThrow()
    ;(await t.server.services.objects.get(key!)).destroy()
    await owner.agent.delete(`/api/scenes/${wide}`).expect(204)
    await expect(t.server.services.objects.get(key!)).rejects.toThrow()
    await owner.agent.get(`/api/exports/${e57.body.export.id}`).expect(404)
  })

  it('fails an export whose worker stopped (no sign of life), with a message', async () => {
    const row = await t.server.services.db
      .insertInto('exports')
      .values({ project_id: projectId, scene_id: sceneId, source: 'scene', format: 'ply', file_name: 'lost.ply', status: 'running', updated_at: new Date(Date.now() - 3_600_000) })
      .returning('id')
      .executeTakeFirstOrThrow()
    const { done } = await waitForExport(owner.agent, row.id)
    expect(done.status).toBe('failed')
    expect(done.error).toMatch(/worker writing this export stopped.*Start the export again/)
  })

  it('says what is wrong with a request, and where', async () => {
    const bad = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'xyz' }).expect(400)
    expect(bad.body.error.message).toMatch(/^body\.format: /)
    const other = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Empty' }).expect(201)).body.scene.id
    await owner.agent.post(`/api/scenes/${other}/exports`).send({ format: 'las', instanceId: placements[0]!.id }).expect(404)
    const empty = await owner.agent.post(`/api/scenes/${other}/exports`).send({ format: 'las' }).expect(409)
    expect(empty.body.error.message).toMatch(/no placements/)
  })

  it('refuses a non-member and a guest whose viewing pass does not allow downloads; lets one that does', async () => {
    const created = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'ply' }).expect(202)
    const id = created.body.export.id as string
    await waitForExport(owner.agent, id)
    for (const path of [`/api/exports/${id}/file`, `/api/exports/${id}`, `/api/scenes/${sceneId}/exports`]) {
      await outsider.agent.get(path).expect(404)
    }
    await outsider.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'las' }).expect(404)
    const viewer = (await guestAgent(t, owner.agent, projectId)).agent
    await viewer.get(`/api/scenes/${sceneId}`).expect(200) // the pass shows the scene
    const refused = await viewer.get(`/api/exports/${id}/file`).expect(403)
    expect(refused.body.error.message).toMatch(/does not let you download/)
    await viewer.post(`/api/scenes/${sceneId}/exports`).send({ format: 'las' }).expect(403)
    const allowed = (await guestAgent(t, owner.agent, projectId, undefined, { allowDownload: true })).agent
    expect((await download(allowed, id)).status).toBe(200)
  })
})
