// Scenes and placements through the API, with real processed scans.
import fs from 'node:fs'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Matrix4, Vector3 } from 'three'
import { upload, waitForScan } from '../utils/scans'
import { joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let mentor: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
let scanId: string

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Scene Owner')
  mentor = await signUpAgent(t, 'Scene Mentor')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Scenes' }).expect(201)).body.project.id
  await joinProject(t, owner.agent, projectId, mentor, 'mentor')
  scanId = (await upload(owner.agent, projectId, fs.readFileSync('tests/fixtures/crate.las'), 'crate.las').expect(202)).body.scan.id
  await waitForScan(owner.agent, scanId)
})
afterAll(async () => {
  await t?.stop()
})

describe('scenes', () => {
  it('creates, lists, renames and deletes a scene', async () => {
    const created = await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Loading door' }).expect(201)
    expect(created.body.scene).toMatchObject({ name: 'Loading door', instanceCount: 0, instances: [] })
    const id = created.body.scene.id
    const list = await mentor.agent.get(`/api/projects/${projectId}/scenes`).expect(200)
    expect(list.body.scenes.map((s: { id: string }) => s.id)).toContain(id)
    await owner.agent.patch(`/api/scenes/${id}`).send({ name: 'West door' }).expect(200)
    expect((await owner.agent.get(`/api/scenes/${id}`).expect(200)).body.scene.name).toBe('West door')
    await owner.agent.delete(`/api/scenes/${id}`).expect(204)
    await owner.agent.get(`/api/scenes/${id}`).expect(404)
  })
})

describe('placements', () => {
  let sceneId: string
  beforeAll(async () => {
    sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Placements' }).expect(201)).body.scene.id
  })

  it('places a ready scan at the identity with a colour, and with a given rigid matrix', async () => {
    const plain = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)
    expect(plain.body.instance).toMatchObject({ scanId, scanName: 'crate', visible: true, matrix: new Matrix4().elements })
    expect(plain.body.instance.color).toMatch(/^#[0-9A-F]{6}$/i)
    const m = new Matrix4().makeRotationZ(Math.PI / 2).setPosition(1, 2, 3).elements
    const turned = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix: m, color: '#336699' }).expect(201)
    turned.body.instance.matrix.forEach((v: number, i: number) => expect(v).toBeCloseTo(m[i]!, 12))
    const scene = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene
    expect(scene.instanceCount).toBe(2)
    expect(scene.instances.map((i: { color: string }) => i.color)).toContain('#336699')
  })

  it('refuses a matrix that is not rigid with a 400 that says why and where', async () => {
    const scaled = new Matrix4().makeScale(1.01, 1.01, 1.01).elements
    const res = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix: scaled }).expect(400)
    expect(res.body.error.field).toBe('matrix')
    expect(res.body.error.message).toMatch(/body\.matrix: is not a rigid transform: column 0 has length 1\.01/)
    const short = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix: [1, 0, 0] }).expect(400)
    expect(short.body.error.message).toMatch(/16 numbers/)
    const instance = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance
    const mirror = await owner.agent.patch(`/api/instances/${instance.id}`).send({ matrix: new Matrix4().makeScale(-1, 1, 1).elements }).expect(400)
    expect(mirror.body.error.message).toMatch(/mirrors/)
  })

  it('moves, hides and recolours a placement, and keeps it after a reload', async () => {
    const instance = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance
    const moved = new Matrix4().makeRotationAxis(new Vector3(0, 0, 1), 0.25).setPosition(0.4, -1.1, 0).elements
    await owner.agent.patch(`/api/instances/${instance.id}`).send({ matrix: moved, visible: false, color: '#AA5500' }).expect(200)
    const again = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances.find((i: { id: string }) => i.id === instance.id)
    expect(again).toMatchObject({ visible: false, color: '#AA5500' })
    again.matrix.forEach((v: number, i: number) => expect(v).toBeCloseTo(moved[i]!, 12))
  })

  it('lets a mentor see placements but not move them', async () => {
    const instance = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance
    await mentor.agent.get(`/api/scenes/${sceneId}`).expect(200)
    const res = await mentor.agent.patch(`/api/instances/${instance.id}`).send({ matrix: new Matrix4().setPosition(1, 0, 0).elements }).expect(403)
    expect(res.body.error.code).toBe('forbidden')
  })

  it('refuses a scan that is not ready or belongs to another project', async () => {
    const other = (await owner.agent.post('/api/projects').send({ name: 'Other' }).expect(201)).body.project.id
    const foreign = (await upload(owner.agent, other, Buffer.from('0 0 0\n1 1 1\n'), 'f.xyz').expect(202)).body.scan.id
    const res = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: foreign }).expect(400)
    expect(res.body.error.field).toBe('scanId')
    const queued = (await upload(owner.agent, projectId, Buffer.from('0 0 0\n1 1 1\n'), 'q.xyz').expect(202)).body.scan.id
    await t.server.services.db.updateTable('scans').set({ status: 'processing' }).where('id', '=', queued).execute()
    const busy = await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: queued }).expect(409)
    expect(busy.body.error.message).toMatch(/processing/)
  })

  it('removes a placement, and a deleted scan takes its placements with it', async () => {
    const instance = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId }).expect(201)).body.instance
    await owner.agent.delete(`/api/instances/${instance.id}`).expect(204)
    await owner.agent.patch(`/api/instances/${instance.id}`).send({ visible: true }).expect(404)
    const extra = (await upload(owner.agent, projectId, fs.readFileSync('tests/fixtures/crate.las'), 'crate2.las').expect(202)).body.scan.id
    await waitForScan(owner.agent, extra)
    await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: extra }).expect(201)
    await owner.agent.delete(`/api/scans/${extra}`).expect(204)
    const scene = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene
    expect(scene.instances.some((i: { scanId: string }) => i.scanId === extra)).toBe(false)
  })
})
