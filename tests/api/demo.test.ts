// The demo's synthetic scans go through the real upload and ingest path when the demo is seeded.
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Marker, Scan } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_GUEST } from '../../server/demo/accounts'
import { CHEST, DOOR } from '../../server/demo/synth/scene'
import { waitForScan } from '../utils/scans'
import { startTestServer, tokenOf, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer({ seedDemo: true }, { WORKER: 'spawn' })
})
afterAll(async () => {
  await t?.stop()
})

it('seeds one account per member role and, for the guest, no account but a viewing pass waiting in the dev mailbox', async () => {
  const emails = (await t.server.services.db.selectFrom('users').select('email').execute()).map((u) => u.email).sort()
  expect(emails).toEqual(DEMO_ACCOUNTS.map((a) => a.email).sort())
  expect(emails).not.toContain(DEMO_GUEST.email)
  const mail = await t.waitForMail(DEMO_GUEST.email)
  expect(mail.subject).toMatch(/^A viewing pass for /)
  // The link points at the server's own address (the pass is made once the server listens).
  const link = mail.links.find((l) => l.includes('/passes/open#token='))!
  expect(new URL(link).origin).toBe(t.url)
})

it('seeds the demo project with its three scans, processed to ready', { timeout: 120_000 }, async () => {
  // Seen as the demo's guest: the viewing pass from the dev mailbox, opened.
  const guest = t.agent()
  const link = (await t.waitForMail(DEMO_GUEST.email)).links.find((l) => l.includes('/passes/open#token='))!
  const { guest: session } = (await guest.post('/api/passes/open').send({ token: tokenOf(link) }).expect(200)).body
  const project = (await guest.get(`/api/projects/${session.projectId}`).expect(200)).body.project
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

  // The seeded markers are checked once the scans are ready: the invented door's own size (1.40 x 2.10 m),
  // the chest 1.32 m long: upright 40 mm a side, short of the story's 80 mm; turned on end it passes.
  const deadline = Date.now() + 60_000
  let markers: Marker[] = []
  for (;;) {
    markers = (await guest.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers
    if (markers.every((m) => m.check.state !== 'pending') || Date.now() > deadline) break
    await new Promise((r) => setTimeout(r, 200))
  }
  const by = Object.fromEntries(markers.map((m) => [m.label, m]))
  const head = by['door head height']!
  expect(head.check.state).toBe('checked')
  expect(Math.abs(head.check.value! - DOOR.height)).toBeLessThan(head.check.expandedUncertainty! + 0.005)
  const section = by['west door, free opening']!
  expect(section.check.state, section.check.reason ?? '').toBe('checked')
  const opening = section.check.section!.opening!
  expect(Math.abs(opening.clearWidth - 2 * DOOR.halfWidth)).toBeLessThan(opening.uncertainty.width + 0.01)
  expect(Math.abs(opening.clearHeight - DOOR.height)).toBeLessThan(opening.uncertainty.height + 0.01)
  const upright = by['chest upright through the door']!.check
  expect(upright.state, upright.reason ?? '').toBe('checked')
  expect(upright.clearance).toMatchObject({ outcome: 'does-not-pass', requiredMargin: 0.08, rotationDegrees: 0 })
  expect(Math.abs(upright.clearance!.margin - (2 * DOOR.halfWidth - CHEST.length) / 2)).toBeLessThan(upright.expandedUncertainty! + 0.01)
  const free = by['chest, any turn']!.check.clearance!
  expect(free.outcome).toBe('passes')
  expect(Math.abs(Math.abs(free.rotationDegrees) - 90)).toBeLessThan(3)
  // Each seeded marker starts its history with one version, by its author.
  for (const m of markers) {
    const revisions = (await guest.get(`/api/markers/${m.id}/history`).expect(200)).body.revisions
    expect(revisions.map((r: { action: string; by: { name: string } | null }) => [r.action, r.by?.name])).toEqual([['created', m.createdBy?.name]])
  }
})
