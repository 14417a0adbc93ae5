// Markers in Chromium on the seeded demo scene: a measurer places a distance with the D tool and a clearance
// through the seeded door section with the C tool, and the values the page shows are the API's. The demo's
// geometry is invented (server/demo/synth/scene.ts); the reference here is the API's own answer, and for the
// distance also the invented door's dimensions.
import '../utils/browserLane'
import { resultOf } from '@shared/schemas'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import type { Marker, Scene } from '@shared/schemas'
import { formatWithUncertainty } from '@shared/format/units'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { CHEST_OBJECT } from '../../server/demo/seed'
import { DOOR } from '../../server/demo/synth/scene'
import { shot, waitNonePending, watchConsole } from '../utils/browser'
import { startDemoScene } from '../utils/demoScene'
import type { TestServer } from '../utils/server'

let t: TestServer
let browser: Browser
let scene: Scene
let projectId: string
type Hook = {
  __spanmark: {
    viewer: { stats(): { firstFrameMs: number | null; tilesPending: number } }
    markers: { count(): number; seenAt(id: string): number | null; list(): { id: string; kind: string; label: string; state: string }[]; pick(x: number, y: number, z: number): Promise<{ x: number; y: number; z: number } | null> }
  }
}

beforeAll(async () => {
  ;({ t, browser, scene, projectId } = await startDemoScene())
}, 150_000)

/** A demo person signed in, on the demo scene's page, with the console watched. */
async function openScene(role: 'owner' | 'measurer' | 'mentor', width = 1600) {
  const context = await browser.newContext({ viewport: { width, height: 900 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}/scenes/${scene.id}`)
  await page.getByTestId('sign-in-email').fill(DEMO_ACCOUNTS.find((a) => a.role === role)!.email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  return { context, page, problems }
}

/** The demo owner through the API, for setting things up and reading the reference values. */
async function ownerAgent() {
  const owner = t.agent()
  await owner.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS.find((a) => a.role === 'owner')!.email, password: DEMO_PASSWORD }).expect(200)
  return owner
}
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

it('places a distance, flags an anchor typed off the surface, places a clearance, and shows the values the server computed', { timeout: 120_000 }, async () => {
  const { context, page, problems } = await openScene('measurer')
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
  // The seeded markers are checked once the scans are ready.
  await waitNonePending(page, 30_000)
  const seeded = await page.evaluate(() => (window as unknown as Hook).__spanmark.markers.count())
  const seededDistances = await page.evaluate(() => (window as unknown as Hook).__spanmark.markers.list().filter((m) => m.kind === 'distance').length)

  // Distance: the D tool, two picks on station A's side of the door: the right jamb and the wall face beside it.
  await page.keyboard.press('d')
  const pick = (p: [number, number, number]) => page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.markers.pick(x, y, z), p)
  const a = await pick([DOOR.halfWidth, DOOR.wallThickness / 2, 1.0])
  const b = await pick([DOOR.halfWidth + 0.8, 0, 1.0])
  expect(a && b, 'both picks land on stored points').toBeTruthy()
  await page.waitForFunction((n) => (window as unknown as Hook).__spanmark.markers.list().filter((m) => m.kind === 'distance').length > n, seededDistances, { timeout: 20_000 })
  await waitNonePending(page, 20_000)
  const list = async () => ((await (await page.request.get(`${t.url}/api/scenes/${scene.id}/markers`)).json()) as { markers: Marker[] }).markers
  const markers = await list()
  expect(markers).toHaveLength(seeded + 1)
  const distance = markers.at(-1)!
  expect(distance.kind).toBe('distance')
  expect(distance.check.state).toBe('checked')
  // The invented wall: jamb face at x = 0.70, face y = 0; the picks were 0.8 m apart in x and 0.15 m in y.
  expect(distance.check.value!).toBeGreaterThan(0.75)
  expect(distance.check.value!).toBeLessThan(0.88)
  const shown = formatWithUncertainty(distance.check.value, distance.check.expandedUncertainty, 'length', 'm')
  const row = page.getByTestId('marker-row').filter({ has: page.locator(`[data-marker-id="${distance.id}"]`) })
  await expect.poll(async () => (await row.getByTestId('marker-row-value').innerText()).replace(/\s+/g, ' ')).toBe(shown.replace(/ \(k = 2\)$/, '').replace(/\s+/g, ' '))
  await expect.poll(() => page.getByTestId('marker-value').innerText()).toBe(shown)
  await shot(page, '40-marker-distance')

  // The second anchor typed 10 cm in front of the wall face: the server flags it off the points.
  await page.getByTestId('marker-anchors-toggle').click()
  await page.getByTestId('marker-anchor-1-y').fill((distance.anchors[1]!.y - 0.1).toFixed(3))
  await page.getByTestId('marker-anchors-save').click()
  await expect.poll(async () => (await list()).find((m) => m.id === distance.id)!.check.state, { timeout: 20_000 }).toBe('off-scan')
  await expect.poll(() => page.getByTestId('marker-reason').innerText()).toMatch(/anchor B is \d+\.\d mm from the nearest stored point/)
  await expect.poll(() => page.getByTestId('marker-card').getAttribute('data-state')).toBe('off-scan')
  await shot(page, '40b-marker-off-scan')

  // Clearance: the C tool, the seeded object (the chest on its trolley, trimmed out of its stations) through
  // the seeded door section.
  await page.keyboard.press('Escape')
  await page.keyboard.press('c')
  const section = markers.find((m) => m.label === 'west door, free opening')!
  await page.getByTestId('marker-clearance-object').selectOption({ label: CHEST_OBJECT })
  await page.getByTestId('marker-clearance-section').selectOption(section.id)
  await expect.poll(() => page.getByTestId('marker-clearance-caution').innerText()).toMatch(/planning aid/i)
  await page.getByTestId('marker-clearance-check').click()
  await page.waitForFunction((n) => (window as unknown as Hook).__spanmark.markers.count() > n, seeded + 1, { timeout: 30_000 })
  const after = await list()
  const clearance = after.at(-1)!
  expect(clearance.kind).toBe('clearance')
  expect(resultOf(clearance.check, 'clearance')!.outcome).toBe('passes')
  await expect.poll(() => page.getByTestId('marker-outcome').innerText()).toMatch(/passes/)
  await expect.poll(() => page.getByTestId('marker-value').innerText()).toBe(formatWithUncertainty(clearance.check.value, clearance.check.expandedUncertainty, 'length', 'm'))
  await expect(page.getByTestId('marker-figure').count()).resolves.toBe(1)
  await shot(page, '41-marker-clearance')
  expect(problems).toEqual([])
  await context.close()
})

it('shows a marker one person places to another within a second, with who is here now and where their pointer is, and merges work done offline', { timeout: 150_000 }, async () => {
  const open = async (role: 'measurer' | 'mentor') => {
    const { context, page, problems } = await openScene(role)
    await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
    await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
    await expect.poll(() => page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
    return { page, context, problems }
  }
  const measurer = await open('measurer')
  const mentor = await open('mentor')
  // Each sees the other here now, named from their sessions.
  await expect.poll(() => mentor.page.getByTestId('here-now-person').getAttribute('title'), { timeout: 5_000 }).toBe('Tomas Reyne')
  await expect.poll(() => measurer.page.getByTestId('here-now-person').getAttribute('title'), { timeout: 5_000 }).toBe('Maren Holt')
  // The measurer's pointer over the wall shows in the mentor's view, in the measurer's colour.
  const spot = await measurer.page.evaluate(() => (window as unknown as { __spanmark: { viewer: { project(x: number, y: number, z: number): { x: number; y: number } } } }).__spanmark.viewer.project(1.2, 0, 1.2))
  const box = (await measurer.page.getByTestId('scene-viewport').boundingBox())!
  for (let i = 0; i < 4; i++) {
    await measurer.page.mouse.move(box.x + spot.x + i, box.y + spot.y)
    await measurer.page.waitForTimeout(150)
  }
  type LiveHook = { __spanmark: { live: { people(): { self: boolean; cursor: number[] | null }[]; cursorsDrawn(): number } } }
  await mentor.page.waitForFunction(() => (window as unknown as LiveHook).__spanmark.live.people().some((p) => !p.self && p.cursor !== null), null, { timeout: 5_000 })
  await mentor.page.waitForFunction(() => (window as unknown as LiveHook).__spanmark.live.cursorsDrawn() >= 1, null, { timeout: 5_000 })
  // With the measurer's name beside it.
  await expect.poll(() => mentor.page.getByTestId('person-label').first().innerText(), { timeout: 5_000 }).toBe('Tomas Reyne')
  const before = await mentor.page.evaluate(() => (window as unknown as Hook).__spanmark.markers.count())
  await measurer.page.keyboard.press('d')
  const pick = (p: [number, number, number]) => measurer.page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.markers.pick(x, y, z), p)
  await pick([DOOR.halfWidth, DOOR.wallThickness / 2, 1.5])
  await pick([DOOR.halfWidth + 0.5, 0, 1.5])
  await measurer.page.waitForFunction((n) => (window as unknown as Hook).__spanmark.markers.count() > n, before, { timeout: 20_000 })
  const placed = (await measurer.page.evaluate(() => (window as unknown as Hook).__spanmark.markers.list())).at(-1)!
  await mentor.page.waitForFunction((id) => (window as unknown as Hook).__spanmark.markers.list().some((m) => m.id === id), placed.id, { timeout: 5_000 })
  // Each page notes when the marker's data arrived (same machine, same clock): the placer's page once the
  // server has answered, the other's once the live document brought it.
  const seenAt = (p: typeof mentor.page) => p.evaluate((id) => (window as unknown as Hook).__spanmark.markers.seenAt(id), placed.id)
  const seenAfterMs = (await seenAt(mentor.page))! - (await seenAt(measurer.page))!
  expect(seenAfterMs).toBeLessThan(1_000)
  await waitNonePending(mentor.page, 5_000)
  // The measurer has the new marker open (the tool selects it): the mentor's table marks its row.
  await expect.poll(() => mentor.page.getByTestId('marker-row-editor').first().getAttribute('title'), { timeout: 5_000 }).toBe('Tomas Reyne has this marker open')
  await shot(mentor.page, '42-marker-seen-live')

  // The measurer's connection drops: the page says so, and the work goes on in the document.
  type Reconnect = { __spanmark: { live: { disconnect(): void; connect(): void } } }
  await measurer.page.evaluate(() => (window as unknown as Reconnect).__spanmark.live.disconnect())
  await expect.poll(() => measurer.page.getByTestId('live-status').innerText(), { timeout: 5_000 }).toMatch(/offline/)
  await shot(measurer.page, '43-offline')
  const whileOffline = await measurer.page.evaluate(() => (window as unknown as Hook).__spanmark.markers.count())
  await pick([-DOOR.halfWidth, DOOR.wallThickness / 2, 1.2])
  await pick([-DOOR.halfWidth - 0.5, 0, 1.2])
  await measurer.page.waitForFunction((n) => (window as unknown as Hook).__spanmark.markers.count() > n, whileOffline, { timeout: 5_000 })
  const offlineMarker = (await measurer.page.evaluate(() => (window as unknown as Hook).__spanmark.markers.list())).at(-1)!
  expect(offlineMarker.state).toBe('pending')
  // Meanwhile the owner renames a seeded marker through the API; nobody else has the offline one yet.
  const owner = await ownerAgent()
  const seededId = (await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers[0].id as string
  await owner.patch(`/api/markers/${seededId}`).send({ label: 'Head height, checked again' }).expect(200)
  expect((await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers.some((m: Marker) => m.id === offlineMarker.id)).toBe(false)
  await mentor.page.waitForFunction((id) => (window as unknown as Hook).__spanmark.markers.list().some((m) => m.id === id && m.label === 'Head height, checked again'), seededId, { timeout: 5_000 })
  // Back online, both sides merge: the mentor sees the offline marker checked, the measurer the rename.
  await measurer.page.evaluate(() => (window as unknown as Reconnect).__spanmark.live.connect())
  await expect.poll(() => measurer.page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
  await mentor.page.waitForFunction((id) => (window as unknown as Hook).__spanmark.markers.list().some((m) => m.id === id && m.state === 'checked'), offlineMarker.id, { timeout: 10_000 })
  await measurer.page.waitForFunction((id) => (window as unknown as Hook).__spanmark.markers.list().some((m) => m.id === id && m.label === 'Head height, checked again'), seededId, { timeout: 10_000 })
  const stored = (await owner.get(`/api/markers/${offlineMarker.id}`).expect(200)).body.marker as Marker
  expect(stored.kind).toBe('distance')
  expect(stored.createdBy?.name).toBe('Tomas Reyne')
  expect(stored.check.state).toBe('checked')
  expect([...measurer.problems, ...mentor.problems]).toEqual([])
  await measurer.context.close()
  await mentor.context.close()
})

it('shows a marker’s versions and restores one, sets a checkpoint and reads the scene as it was on the timeline', { timeout: 120_000 }, async () => {
  const { context, page, problems } = await openScene('measurer')
  await page.waitForFunction(() => (window as unknown as { __spanmark?: { live?: { ready(): boolean } } }).__spanmark?.live?.ready() === true, null, { timeout: 30_000 })
  const owner = await ownerAgent()
  const list = (await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]
  const head = list.find((m) => m.kind === 'distance')!
  // A rename through the API makes a second version.
  await owner.patch(`/api/markers/${head.id}`).send({ label: 'head height, renamed' }).expect(200)
  const versions = (await owner.get(`/api/markers/${head.id}/history`).expect(200)).body.revisions.length as number
  expect(versions).toBeGreaterThanOrEqual(2)
  await page.getByTestId('marker-row-label').filter({ hasText: 'head height, renamed' }).click()
  await page.getByTestId('marker-history-toggle').click()
  await expect.poll(() => page.getByTestId('marker-history-row').count(), { timeout: 10_000 }).toBe(versions)
  await expect(page.getByTestId('marker-history-row').first().innerText()).resolves.toMatch(/changed\s+label “.+” → “head height, renamed”/)
  await shot(page, '44-marker-history')
  // Restore the version before the rename: the label comes back, and the history gains a version.
  await page.getByTestId('marker-history-restore').first().click()
  await page.getByTestId('confirm-accept').click()
  await expect.poll(async () => ((await owner.get(`/api/markers/${head.id}`).expect(200)).body.marker as Marker).label, { timeout: 10_000 }).toBe(head.label)
  await expect.poll(() => page.getByTestId('marker-history-row').count(), { timeout: 10_000 }).toBe(versions + 1)
  await expect(page.getByTestId('marker-history-row').first().getAttribute('data-action')).resolves.toBe('restored')
  // The timeline: a checkpoint freezes the values; the slider at its start shows the scene before any marker.
  await page.getByTestId('timeline-toggle').click()
  await expect.poll(async () => ((await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]).every((m) => m.check.state !== 'pending'), { timeout: 20_000 }).toBe(true)
  await page.getByTestId('checkpoint-name').fill('issued for the move')
  await page.getByTestId('checkpoint-set').click()
  await expect.poll(() => page.getByTestId('timeline-heading').innerText(), { timeout: 10_000 }).toMatch(/^Checkpoint “issued for the move”/)
  const count = ((await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]).length
  await expect.poll(() => page.getByTestId('timeline-row').count()).toBe(count)
  await shot(page, '45-timeline-checkpoint')
  await page.getByTestId('timeline-slider').locator('[role="slider"]').focus()
  await page.keyboard.press('Home')
  await expect.poll(() => page.getByTestId('timeline-heading').innerText(), { timeout: 10_000 }).toMatch(/^As it was on /)
  await expect.poll(() => page.getByTestId('timeline-table').innerText(), { timeout: 10_000 }).toMatch(/No markers yet at that time/)
  await page.getByTestId('timeline-now').click()
  await expect(page.getByTestId('timeline-heading').count()).resolves.toBe(0)
  expect(problems).toEqual([])
  await context.close()
})

it('prints the measurement sheet with the API’s values, the scans used and the cautions', { timeout: 90_000 }, async () => {
  const { context, page, problems } = await openScene('mentor', 1400)
  await page.getByTestId('scene-sheet-link').click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}/sheet$`))
  const owner = await ownerAgent()
  const list = (await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]
  await expect.poll(() => page.getByTestId('sheet-row').count(), { timeout: 10_000 }).toBe(list.length)
  for (const m of list) {
    await expect(page.locator(`[data-testid="sheet-row"][data-marker-id="${m.id}"] [data-testid="sheet-value"]`).innerText()).resolves.toBe(formatWithUncertainty(m.check.value, m.check.expandedUncertainty, m.kind === 'angle' ? 'angle' : 'length', 'm'))
  }
  // Each row's review state in the screen's words.
  for (const m of list) {
    const word = { open: 'open', 'changes-asked': 'changes asked', 'signed-off': 'signed off' }[m.review.state]
    await expect(page.locator(`[data-testid="sheet-row"][data-marker-id="${m.id}"] [data-testid="sheet-review"]`).innerText()).resolves.toMatch(new RegExp(`^${word}`))
  }
  // Each section's, clearance's and size's figure under its row (those with a result to draw).
  const drawn = list.filter((m) => (m.kind === 'section' || m.kind === 'clearance' || m.kind === 'size') && m.check.result !== null).length
  await expect(page.getByTestId('sheet-figure').count()).resolves.toBe(drawn)
  await expect(page.getByTestId('sheet-print').innerText()).resolves.toMatch(/save as PDF/)
  await expect(page.getByTestId('sheet-scans').locator('tbody tr').count()).resolves.toBe(scene.instances.length)
  await expect(page.getByTestId('sheet-cautions').innerText()).resolves.toMatch(/licensed surveyor[\s\S]*IEC 60825-1/)
  await shot(page, '46-measurement-sheet')
  // Printed as the browser prints it (A4), for a person to turn into images and read every page.
  await page.emulateMedia({ media: 'print' })
  const pdf = await page.pdf({ path: 'tests/output/measurement-sheet.pdf', format: 'A4', printBackground: true })
  expect(pdf.subarray(0, 5).toString()).toBe('%PDF-')
  const letter = await page.pdf({ path: 'tests/output/measurement-sheet-letter.pdf', format: 'Letter', printBackground: true })
  expect(letter.subarray(0, 5).toString()).toBe('%PDF-')
  expect(problems).toEqual([])
  await context.close()
})
