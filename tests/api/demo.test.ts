// The demo's synthetic scans go through the real upload and ingest path when the demo is seeded.
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Scan } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { CHEST } from '../../server/demo/synth/scene'
import { waitForScan } from '../utils/scans'
import { startTestServer, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer({ seedDemo: true }, { WORKER: 'spawn' })
})
afterAll(async () => {
  await t?.stop()
})

it('seeds the demo project with its three scans, processed to ready', { timeout: 120_000 }, async () => {
  const guest = t.agent()
  await guest.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS.find((a) => a.role === 'guest')!.email, password: DEMO_PASSWORD }).expect(200)
  const [project] = (await guest.get('/api/projects').expect(200)).body.projects
  expect(project.role).toBe('guest')
  const listed = (await guest.get(`/api/projects/${project.id}/scans`).expect(200)).body.scans as Scan[]
  expect(listed).toHaveLength(3)
  const scans = await Promise.all(listed.map(async (s) => (await waitForScan(guest, s.id, undefined, 100_000, 200)).scan))
  for (const s of scans) expect(s.status, `${s.name}: ${s.error}`).toBe('ready')
  const byFormat = Object.fromEntries(scans.map((s) => [s.fileName, s]))
  const log = byFormat['west-door-station-B.log']!
  expect(log.format).toBe('station-log')
  expect(log.station).toMatchObject({ stationId: 'yard-east', laserClass: '1', shotsPerReading: 5 })
  expect(log.uncertaintySource).toBe('per-point')
  expect(log.dropped.tooFewSamples ?? 0).toBeGreaterThan(0)
  const chest = byFormat['chart-chest.ply']!
  expect(chest.attributes.color).toBe(true)
  const size = chest.bounds!.max.map((v, i) => v - chest.bounds!.min[i]!)
  // The generator's own chest (server/demo/synth/scene.ts), scanned with about 1 mm of range noise.
  expect(size[0]).toBeCloseTo(CHEST.length, 1)
  expect(size[1]).toBeCloseTo(CHEST.depth, 1)
  expect(size[2]).toBeCloseTo(CHEST.height, 1)
  expect(byFormat['west-door-station-A.ply']!.pointCount!).toBeGreaterThan(200_000)
  const [scene] = (await guest.get(`/api/projects/${project.id}/scenes`).expect(200)).body.scenes
  expect(scene.instanceCount).toBe(3)
  const full = (await guest.get(`/api/scenes/${scene.id}`).expect(200)).body.scene
  expect(full.instances.map((i: { scanName: string }) => i.scanName).sort()).toEqual(scans.map((s) => s.name).sort())
})
