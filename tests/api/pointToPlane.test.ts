// The point-to-plane distance through the API, on a synthetic scan made here (not demo data): a level floor,
// 1 cm grid, 1 mm normal noise, with a block standing 30.0 mm proud of it. The reference value is the block's
// own height; the budget follows GUM (JCGM 100:2008) 5.1 (the math itself is checked against three.js,
// ml-matrix and a Monte Carlo run in tests/unit/measure/pointToPlane.test.ts).
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { resultOf, type Marker } from '@shared/schemas'
import { upload, waitForScan } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { SurfaceSampler } from '../utils/solids'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let sceneId: string
let placementId: string
const BLOCK = { x: 0.9, y: 0.9, size: 0.3, height: 0.03 }

const at = (x: number, y: number, z: number) => ({ instanceId: placementId, x, y, z })
const floor = () => [at(0.2, 0.2, 0), at(1.8, 0.3, 0), at(0.5, 1.7, 0), at(1.6, 1.6, 0)]
const onBlock = () => at(BLOCK.x + 0.15, BLOCK.y + 0.15, BLOCK.height)

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Plane Owner')
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Floors' }).expect(201)).body.project.id
  const inBlock = (p: number[]) => p[0]! > BLOCK.x && p[0]! < BLOCK.x + BLOCK.size && p[1]! > BLOCK.y && p[1]! < BLOCK.y + BLOCK.size
  const solid = new SurfaceSampler(0.01, 0.001, 31)
    .rect([0, 0, 0], [1, 0, 0], 2, [0, 1, 0], 2, inBlock)
    .rect([BLOCK.x, BLOCK.y, BLOCK.height], [1, 0, 0], BLOCK.size, [0, 1, 0], BLOCK.size)
  const scanId = (await upload(owner.agent, projectId, solid.ply(), 'floor.ply').expect(202)).body.scan.id
  const { scan } = await waitForScan(owner.agent, scanId, undefined, 60_000)
  expect(scan.status, scan.error ?? '').toBe('ready')
  await owner.agent.patch(`/api/scans/${scanId}`).send({ enteredUncertainty: 0.001 }).expect(200)
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Floor' }).expect(201)).body.scene.id
  placementId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1] }).expect(201)).body.instance.id
}, 120_000)

afterAll(async () => {
  await t?.stop()
})

describe('a point-to-plane distance', () => {
  it('measures the block standing 30 mm proud of a level floor, within its stated uncertainty', async () => {
    const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'point-to-plane', anchors: [onBlock(), ...floor()] }).expect(201)
    const m = res.body.marker as Marker
    expect(m.label).toBe('point to plane 1')
    expect(m.check.state, m.check.reason ?? '').toBe('checked')
    const r = resultOf(m.check, 'point-to-plane')!
    expect(Math.abs(m.check.value! - BLOCK.height)).toBeLessThanOrEqual(m.check.expandedUncertainty!)
    expect(r.signed).toBeGreaterThan(0) // above the floor
    expect(r.tiltFromLevel).toBeLessThan(0.5)
    // Every anchor's parts are in the budget, and they add up to the standard uncertainty.
    const sum = Math.hypot(...m.check.parts.map((p) => p.u))
    expect(sum).toBeCloseTo(m.check.standardUncertainty!, 6)
    expect(new Set(m.check.parts.map((p) => p.name[0]))).toEqual(new Set(['A', 'B', 'C', 'D', 'E']))
  })

  it('refuses fewer than three points on the plane, saying how many it takes', async () => {
    const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'point-to-plane', anchors: [onBlock(), ...floor().slice(0, 2)] }).expect(400)
    expect(JSON.stringify(res.body)).toMatch(/at least 3 points on the plane/)
  })

  it('says why when the plane points lie in a line', async () => {
    const line = [at(0.2, 0.2, 0), at(0.8, 0.2, 0), at(1.6, 0.2, 0)]
    const m = (await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'point-to-plane', anchors: [onBlock(), ...line] }).expect(201)).body.marker as Marker
    expect(m.check.state).toBe('invalid-geometry')
    expect(m.check.reason).toMatch(/lie in a line/)
  })
})
