// Objects and trims in Chromium, on scans made here of known geometry (tests/utils/solids.ts: 1 mm seeded noise):
// a crate 0.60 x 0.40 x 1.20 m standing on a floor, scanned from two stations (the first with stray points off
// one side), a clean scan of the same crate alone, and a wall with a 0.90 x 2.00 m door. A measurer trims the
// floor away in the view (a level cut from a picked floor point on the first station, a keep box typed on the
// second), makes an object of both stations, drops stray points (Rusu et al. 2008's statistical outlier
// removal, k 8, n 2), cuts a patch of the wall by an outline drawn head-on, places a clearance on the object
// through the door with the C tool, and gets the clean crate's clearance within U
// (the reference: the API's clearance of the clean scan; the crate's true 0.150 m either side is the solids'
// own). The untrimmed station, floor and all, does not pass: the difference the trims make.
// Screenshots go to /tmp/objui-shots/.
import '../utils/browserLane'
import fs from 'node:fs'
import { afterAll, beforeAll, expect, it } from 'vitest'
import { Matrix4 } from 'three'
import type { Browser } from 'playwright-core'
import { resultOf, type Marker, type ObjectPoints, type SceneObject } from '@shared/schemas'
import { formatCount } from '@/lib/format'
import { launchBrowser, shot, waitNonePending, watchConsole } from '../utils/browser'
import { upload, waitForScan } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { boxSolid, SurfaceSampler, wallWithOpening } from '../utils/solids'
import { waitChecked as waitCheckedBy } from '../utils/markers'

const CRATE = { w: 0.6, d: 0.4, h: 1.2 }
const DOOR = { width: 0.9, height: 2.0 }
/** Grid spacing of the scans, metres: coarse enough to keep the file quick, fine enough for millimetre margins. */
const SPACING = 0.02
/** Where the scans are placed: the crate stations together (aligned), the clean crate and the wall apart. */
const AT = { crateA: [0, 0, 0], crateB: [0, 0, 0], clean: [4, 0, 0], wall: [0, 3, 0] } as const
type Name = keyof typeof AT

let t: TestServer
let browser: Browser
let launching: Promise<Browser> | undefined
let owner: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
let sceneId: string
const placed = {} as Record<Name, string>
let section: Marker
/** The references, checked by the server while the page is used: the clean crate, and station 1 as scanned. */
const references = {} as Record<'clean' | 'raw', string>

type Hook = {
  __spanmark: {
    viewer: { stats(): { firstFrameMs: number | null; tilesPending: number }; project(x: number, y: number, z: number): { x: number; y: number } }
    markers: { list(): { id: string; kind: string; state: string }[]; pick(x: number, y: number, z: number): Promise<{ instanceId: string } | null> }
    objects: { draft(): { shape: string; height?: number } | null; cutPoints(): Record<string, number>; outlines(): number; onHandle(): string | null }
  }
}

/**
 * The crate's five visible faces standing on a 1.8 x 1.8 m floor (the floor under it not scanned), as one
 * station sees them (every face: the stations here differ by their noise, as two aligned stations do).
 */
function crateOnFloor(seed: number): SurfaceSampler {
  const { w, d, h } = CRATE
  const s = new SurfaceSampler(SPACING, 0.001, seed)
  const X = [1, 0, 0], Y = [0, 1, 0], Z = [0, 0, 1]
  s.rect([-w / 2, -d / 2, h], X, w, Y, d)
  s.rect([-w / 2, -d / 2, 0], X, w, Z, h)
  s.rect([-w / 2, d / 2, 0], Z, h, X, w)
  s.rect([-w / 2, -d / 2, 0], Z, h, Y, d)
  s.rect([w / 2, -d / 2, 0], Y, d, Z, h)
  s.rect([-0.9, -0.9, 0], X, 1.8, Y, 1.8, (p) => Math.abs(p[0]!) < w / 2 + 0.005 && Math.abs(p[1]!) < d / 2 + 0.005)
  return s
}

/** Points a beam grazing the crate's +x side leaves between it and the background: 6 to 10 cm out, 12 of them. */
const STRAYS = 12
function withStrays(s: SurfaceSampler): SurfaceSampler {
  for (let i = 0; i < STRAYS; i++) s.point([CRATE.w / 2 + 0.06 + (i % 3) * 0.02, -0.15 + (i % 4) * 0.1, 0.3 + i * 0.06], [1, 0, 0])
  return s
}

const waitChecked = (id: string) => waitCheckedBy(owner.agent, id)

beforeAll(async () => {
  if (!fs.existsSync('dist/index.html')) throw new Error('browser tests need the client build: run them through `npm test`')
  t = await startTestServer({}, { WORKER: 'spawn' })
  // Chromium starts while the scans are processed.
  launching = launchBrowser()
  owner = await signUpAgent(t, 'Object Measurer')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Crate through the door' }).expect(201)).body.project.id
  const solids: Record<Name, SurfaceSampler> = {
    crateA: withStrays(crateOnFloor(21)),
    crateB: crateOnFloor(22),
    clean: boxSolid(CRATE.w, CRATE.d, CRATE.h, SPACING, 0.001, 23),
    wall: wallWithOpening({ width: DOOR.width, height: DOOR.height, spacing: SPACING, seed: 24 }),
  }
  const names: Record<Name, string> = { crateA: 'crate, station 1', crateB: 'crate, station 2', clean: 'crate alone', wall: 'door wall' }
  const scanIds = {} as Record<Name, string>
  for (const [name, solid] of Object.entries(solids) as [Name, SurfaceSampler][]) scanIds[name] = (await upload(owner.agent, projectId, solid.ply(), `${names[name]}.ply`).expect(202)).body.scan.id
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Crate and door' }).expect(201)).body.scene.id
  for (const name of Object.keys(solids) as Name[]) {
    const { scan } = await waitForScan(owner.agent, scanIds[name]!, undefined, 60_000)
    expect(scan.status, `${name}: ${scan.error}`).toBe('ready')
    const [x, y, z] = AT[name]
    const matrix = new Matrix4().makeTranslation(x, y, z).elements
    placed[name] = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scanIds[name], matrix }).expect(201)).body.instance.id
  }
  // A section across the door at 1 m, finding its free opening.
  const half = DOOR.width / 2
  const anchor = (x: number) => ({ instanceId: placed.wall, x: AT.wall[0] + x, y: AT.wall[1], z: 1 })
  const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'section', label: 'door', anchors: [anchor(-half), anchor(half)], params: { plane: 'two-points', thickness: 0.1, opening: true } })
  expect(res.status, JSON.stringify(res.body)).toBe(201)
  section = await waitChecked(res.body.marker.id)
  for (const [name, instanceId] of [['clean', placed.clean], ['raw', placed.crateA]] as const) {
    const ref = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'clearance', label: `${name} reference`, params: { objectInstanceId: instanceId, sectionMarkerId: section.id } })
    expect(ref.status, JSON.stringify(ref.body)).toBe(201)
    references[name] = ref.body.marker.id
  }
  browser = await launching
}, 120_000)

afterAll(async () => {
  // Closed even when the set-up failed before it waited for Chromium.
  await (await launching?.catch(() => undefined))?.close()
  await t?.stop()
})

it('trims the floor away in the view, makes an object of two stations, and gets the clean crate’s clearance within U', { timeout: 120_000 }, async () => {
  const context = await browser.newContext({ viewport: { width: 1600, height: 900 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}/scenes/${sceneId}`)
  await page.getByTestId('sign-in-email').fill(owner.email)
  await page.getByTestId('sign-in-password').fill(owner.password)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/scenes/${sceneId}$`))
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
  // Runs a function of the page's test hooks in the page (its source, since a function cannot be sent).
  const hook = <T,>(fn: (h: Hook['__spanmark']) => T) => page.evaluate(`(${fn.toString()})(window.__spanmark)`) as Promise<Awaited<T>>

  // The objects drawer: a new object of station 1.
  await page.getByTestId('objects-drawer-open').click()
  await page.getByTestId('object-new').click()
  // A name left empty is refused before sending, naming the field.
  await page.getByTestId('object-new-member').and(page.locator(`[data-instance-id="${placed.crateA}"]`)).check()
  await page.getByTestId('object-new-save').click()
  await expect.poll(() => page.getByTestId('object-new-error').innerText()).toBe('name: must not be empty')
  await page.getByTestId('object-new-name').fill('crate')
  await page.getByTestId('object-new-save').click()
  const card = page.getByTestId('object-card').filter({ hasText: 'crate' })
  await card.getByTestId('object-kept').waitFor()
  const objects = async () => (await owner.agent.get(`/api/scenes/${sceneId}/objects`).expect(200)).body.objects as SceneObject[]
  const crate = (await objects()).find((o) => o.name === 'crate')!
  expect(crate.members).toEqual([placed.crateA])
  const points = async () => (await owner.agent.get(`/api/objects/${crate.id}/points`).expect(200)).body as ObjectPoints
  const untrimmed = await points()
  await shot(page, '01-object-made')

  // Station 1: cut below a height, from a picked floor point (0.5 m in front of the crate).
  const member = (id: string) => card.getByTestId('object-member').and(page.locator(`[data-instance-id="${id}"]`))
  await member(placed.crateA).getByTestId('object-trim-below').click()
  await page.getByTestId('trim-panel').waitFor()
  await page.getByTestId('trim-pick-floor').click()
  const floor = await hook((h) => h.markers.pick(0, -0.7, 0))
  // Either station's floor there (the two lie on one another, aligned).
  expect([placed.crateA, placed.crateB]).toContain(floor?.instanceId)
  await expect.poll(() => hook((h) => h.objects.draft()?.height ?? null)).not.toBeNull()
  const height = (await hook((h) => h.objects.draft()?.height))!
  // The floor's noise is 1 mm: the cut goes 10 mm above the picked point.
  expect(Math.abs(height - 0.01)).toBeLessThan(0.005)
  await expect.poll(() => page.getByTestId('trim-height').inputValue()).toBe(height.toFixed(3))
  // A bad height names the field and sends nothing.
  await page.getByTestId('trim-height').fill('ten cm')
  await page.getByTestId('trim-save').click()
  await expect.poll(() => page.getByTestId('trim-error').innerText()).toBe('height: Enter a number of metres, such as 1.25.')
  await page.getByTestId('trim-height').fill(height.toFixed(3))
  await shot(page, '02-cut-below-drawn')
  await page.getByTestId('trim-save').click()
  await page.getByTestId('trim-panel').waitFor({ state: 'detached' })
  await expect.poll(async () => (await objects()).find((o) => o.id === crate.id)!.trims.length).toBe(1)
  const afterCut = await points()
  // The floor (1.8 x 1.8 m less the footprint) is most of the station: it is gone.
  expect(afterCut.kept).toBeLessThan(untrimmed.kept * 0.5)
  expect(afterCut.members[0]!.trimmed).toBeGreaterThan(untrimmed.kept * 0.5)
  await expect.poll(() => card.getByTestId('object-kept').getAttribute('data-kept')).toBe(String(afterCut.kept))
  await expect.poll(() => hook((h) => h.objects.outlines())).toBeGreaterThanOrEqual(1)
  await expect.poll(() => card.getByTestId('object-preview').getAttribute('data-points')).toBe(String(afterCut.sample.length / 3))
  await shot(page, '03-floor-cut')

  // Station 2 joins the object, trimmed by a keep box typed around the crate (clear of the floor).
  await card.getByTestId('object-member-add-choice').selectOption(placed.crateB)
  await card.getByTestId('object-member-add').click()
  await member(placed.crateB).waitFor()
  await member(placed.crateB).getByTestId('object-trim-mode').selectOption('keep')
  // A new box starts at the last picked point: the crate's top, well inside the view.
  expect(await hook((h) => h.markers.pick(0, 0, 1.2))).not.toBeNull()
  await member(placed.crateB).getByTestId('object-trim-box').click()
  await page.getByTestId('trim-panel').waitFor()
  // The box's move handle along x: found by hovering out from its centre along x's image (past the handles of
  // the planes near the centre), then dragged 60 px.
  let canvas = (await page.getByTestId('scene-viewport').boundingBox())!
  const draftBox = async () => (await hook((h) => h.objects.draft())) as unknown as { centre: [number, number, number] }
  const before = await draftBox()
  const view = (p: [number, number, number]) => page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.viewer.project(x, y, z), p)
  const c0 = await view(before.centre)
  const c1 = await view([before.centre[0] + 0.1, before.centre[1], before.centre[2]])
  const len = Math.hypot(c1.x - c0.x, c1.y - c0.y)
  const dir = { x: (c1.x - c0.x) / len, y: (c1.y - c0.y) / len }
  // Two frames first: the handles are hit-tested where they were last drawn.
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))))
  let grip: { x: number; y: number } | null = null
  for (let d = 10; d <= 160 && !grip; d += 5) {
    for (const side of [0, 4, -4]) {
      const at = { x: canvas.x + c0.x + dir.x * d - dir.y * side, y: canvas.y + c0.y + dir.y * d + dir.x * side }
      await page.mouse.move(at.x, at.y)
      if ((await hook((h) => h.objects.onHandle())) === 'X') {
        grip = at
        break
      }
    }
  }
  if (!grip) await shot(page, '04-no-handle')
  expect(grip, `a move handle along x, from ${JSON.stringify(c0)} towards ${JSON.stringify(c1)}`).not.toBeNull()
  await page.mouse.down()
  await page.mouse.move(grip!.x + dir.x * 60, grip!.y + dir.y * 60, { steps: 4 })
  await page.mouse.up()
  const dragged = await draftBox()
  expect(dragged.centre[0] - before.centre[0]).toBeGreaterThan(0.01)
  expect(Math.abs(dragged.centre[1] - before.centre[1])).toBeLessThan(1e-9)
  await expect.poll(() => page.getByTestId('trim-centre-x').inputValue()).toBe(dragged.centre[0].toFixed(3))
  const typed = { 'trim-centre-x': '0', 'trim-centre-y': '0', 'trim-centre-z': '0.63', 'trim-size-x': '0.8', 'trim-size-y': '0.6', 'trim-size-z': '0', 'trim-turn': '0' }
  for (const [id, value] of Object.entries(typed)) await page.getByTestId(id).fill(value)
  await page.getByTestId('trim-save').click()
  // A zero edge is refused before sending, by the API's own rule, naming the edge.
  await expect.poll(() => page.getByTestId('trim-error').innerText()).toBe('size z: must be at least 0.001 m')
  await page.getByTestId('trim-size-z').fill('1.22')
  await page.getByTestId('trim-size-z').press('Enter')
  await shot(page, '04-keep-box-drawn')
  await page.getByTestId('trim-save').click()
  await page.getByTestId('trim-panel').waitFor({ state: 'detached' })
  const both = await points()
  expect(both.members.map((m) => m.instanceId)).toEqual([placed.crateA, placed.crateB])
  const [a, b] = both.members
  // Both stations keep about the crate's five faces (each station's points differ by noise only).
  expect(Math.abs(a!.kept - b!.kept) / a!.kept).toBeLessThan(0.05)
  await expect.poll(() => card.getByTestId('object-member-kept').count()).toBe(2)

  // Stray points on: a k below the schema's least is named and not sent; k 8, n 2 is, and the drawer says how
  // many were dropped, as the API does.
  await card.getByTestId('object-stray-on').check()
  await card.getByTestId('object-stray-k').fill('1')
  await card.getByTestId('object-stray-apply').click()
  await expect.poll(() => card.getByTestId('object-error').innerText()).toBe('k (neighbours): must be at least 2')
  await card.getByTestId('object-stray-k').fill('8')
  await card.getByTestId('object-stray-n').fill('2')
  await card.getByTestId('object-stray-apply').click()
  await expect.poll(async () => (await objects()).find((o) => o.id === crate.id)!.stray).toEqual({ k: 8, n: 2 })
  const stray = (await points()).stray!
  // The planted strays of station 1 go (with perhaps a few points at the crate's corners).
  expect(stray.dropped).toBeGreaterThanOrEqual(STRAYS)
  await expect.poll(() => card.getByTestId('object-stray-dropped').innerText()).toBe(`${formatCount(stray.dropped)} stray points dropped (k 8, n 2)`)
  await shot(page, '05-two-stations')

  // A scene cut on the wall, beside the door, by an outline clicked on a head-on view along y. Its points are
  // hidden in the view, and dimmed on demand.
  await page.getByTestId('scene-cuts-placement').and(page.locator(`[data-instance-id="${placed.wall}"]`)).getByTestId('scene-cut-outline').click()
  await page.getByTestId('trim-outline-view').selectOption('front')
  canvas = (await page.getByTestId('scene-viewport').boundingBox())!
  await expect.poll(() => page.getByTestId('profile-banner').innerText()).toMatch(/outline/)
  // Right of the door, under the section's slab at 1 m (and clear of the labels and the panel on the screen).
  const corners: [number, number][] = [[0.6, 0.45], [0.95, 0.45], [0.95, 0.85], [0.6, 0.85], [0.6, 0.45]]
  for (const [x, z] of corners) {
    const px = (await page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.viewer.project(x, y, z), [AT.wall[0] + x, AT.wall[1], z] as const))
    await page.mouse.click(canvas.x + px.x, canvas.y + px.y)
  }
  // The fifth click, on the first corner, closed it.
  await expect.poll(() => hook((h) => (h.objects.draft() as { closed?: boolean } | null)?.closed ?? null)).toBe(true)
  await shot(page, '06-outline-drawn')
  await page.getByTestId('trim-save').click()
  await page.getByTestId('trim-panel').waitFor({ state: 'detached' })
  await expect.poll(() => page.getByTestId('profile-banner').count()).toBe(0)
  await expect.poll(async () => Object.entries(await hook((h) => h.objects.cutPoints())).filter(([, n]) => n > 0).map(([id]) => id), { timeout: 10_000 }).toEqual([placed.wall])
  await page.getByTestId('scene-cuts-dim').check()
  await shot(page, '07-scene-cut-dimmed')
  await page.getByTestId('scene-cuts-dim').uncheck()

  // The clearance through the door, on the object, with the C tool.
  await page.getByTestId('objects-drawer-fold').click()
  await page.keyboard.press('c')
  await page.getByTestId('marker-clearance-object').selectOption(crate.id)
  await page.getByTestId('marker-clearance-section').selectOption(section.id)
  await page.getByTestId('marker-clearance-check').click()
  await expect.poll(() => hook((h) => h.markers.list().filter((m) => m.kind === 'clearance').length), { timeout: 20_000 }).toBe(3)
  await waitNonePending(page, 30_000)
  const onObject = (await owner.agent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers.find((m: Marker) => m.kind === 'clearance' && !Object.values(references).includes(m.id)) as Marker
  expect((onObject.params as { objectId?: string }).objectId).toBe(crate.id)
  await expect.poll(() => page.getByTestId('marker-outcome').innerText()).toMatch(/passes/)
  await shot(page, '08-clearance-on-object')

  // The references made through the API: the clean crate, and station 1 as it was scanned, floor and all.
  const clean = await waitChecked(references.clean)
  const raw = await waitChecked(references.raw)
  const c = resultOf(onObject.check, 'clearance')!
  const ref = resultOf(clean.check, 'clearance')!
  expect(c.outcome).toBe('passes')
  expect(Math.abs(c.margin - ref.margin)).toBeLessThanOrEqual(Math.max(onObject.check.expandedUncertainty!, clean.check.expandedUncertainty!))
  // The crate's true margin is (0.90 - 0.60) / 2 = 0.150 m either side; the floor taken as the object does not pass.
  expect(Math.abs(c.margin - 0.15)).toBeLessThan(0.03)
  expect(resultOf(raw.check, 'clearance')!.outcome).not.toBe('passes')
  console.info(`clearance through the 0.90 m door: untrimmed station ${resultOf(raw.check, 'clearance')!.margin.toFixed(3)} m, trimmed object ${c.margin.toFixed(3)} ± ${onObject.check.expandedUncertainty!.toFixed(3)} m, clean crate ${ref.margin.toFixed(3)} ± ${clean.check.expandedUncertainty!.toFixed(3)} m`)
  expect(problems).toEqual([])
  await context.close()
})
