// Aligning the demo's two stations in Chromium: a measurer opens the align tool (T), picks the four sphere
// targets as tie pairs on station B (roughly placed) and on station A, makes one a check point, fits, reads
// the RMS, refines by ICP, accepts, and finds the width across the stations re-checked with B's registration
// in its budget and the registration on the measurement sheet. References: the demo generator's own poses
// and targets (server/demo/synth, invented geometry) and the API's answers.
import '../utils/browserLane'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import type { Marker, Registration, Scene } from '@shared/schemas'
import { invertRigid, multiplyRigid, rotationZ, transformPoint } from '@shared/geometry/rigidTransform'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { STATION_A, STATION_B } from '../../server/demo/synth/demoScans'
import { DOOR, TARGETS } from '../../server/demo/synth/scene'
import { shot, waitNonePending, watchConsole } from '../utils/browser'
import { startDemoScene } from '../utils/demoScene'
import type { TestServer } from '../utils/server'

let t: TestServer
let browser: Browser
let scene: Scene
let projectId: string

type AlignState = {
  movingId: string | null
  heldId: string | null
  pairs: number
  complete: number
  busy: string | null
  error: string | null
  registration: { id: string; state: string; rms: number | null; fitRms: number | null; checkRms: number | null; refine: string | null } | null
}
type Hook = {
  __spanmark: {
    viewer: { stats(): { firstFrameMs: number | null; tilesPending: number } }
    markers: { list(): { state: string }[]; pick(x: number, y: number, z: number): Promise<{ instanceId: string } | null> }
    align: { state(): AlignState }
  }
}

beforeAll(async () => {
  ;({ t, browser, scene, projectId } = await startDemoScene())
}, 150_000)
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

it('aligns station B onto station A by the sphere targets, refines, accepts, and shows the registration', { timeout: 180_000 }, async () => {
  // The seeded markers' first checks are in before the page opens (the page then starts from their records).
  const agent = t.agent()
  await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS.find((a) => a.role === 'measurer')!.email, password: DEMO_PASSWORD }).expect(200)
  for (const deadline = Date.now() + 60_000; ; ) {
    const list = (await agent.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]
    if (list.every((m) => m.check.state !== 'pending')) break
    if (Date.now() > deadline) throw new Error('the seeded markers were not checked within a minute')
    await new Promise((r) => setTimeout(r, 250))
  }
  const context = await browser.newContext({ viewport: { width: 1600, height: 900 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}/scenes/${scene.id}`)
  await page.getByTestId('sign-in-email').fill(DEMO_ACCOUNTS.find((a) => a.role === 'measurer')!.email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  const hook = () => page.evaluate(() => (window as unknown as Hook).__spanmark.align.state())
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
  await waitNonePending(page, 30_000)

  // The align tool: B moves, A stays (the first placement stays by default).
  await page.keyboard.press('t')
  await page.getByTestId('align-panel').waitFor()
  const a = scene.instances.find((i) => /station A/.test(i.scanName))!
  const b = scene.instances.find((i) => /station B/.test(i.scanName))!
  expect(await page.getByTestId('align-moving').inputValue()).toBe(b.id)
  expect(await page.getByTestId('align-held').inputValue()).toBe(a.id)
  expect(await page.getByTestId('align-target-sphere').isChecked()).toBe(true)

  // Each target where it shows: on B as roughly placed (its true pose is the generator's), on A where it stood.
  // Clicked in the middle of the cap each station saw (a click at the centre's image can land on the cap's rim,
  // where the 1.5 R gather of the sphere fit takes in the post under the yard target).
  const onB = multiplyRigid(b.matrix, invertRigid(rotationZ(STATION_B.headingDeg, ...STATION_B.position)))
  const pick = (p: [number, number, number]) => page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.markers.pick(x, y, z), p)
  const facing = (c: readonly number[], from: readonly number[]) => {
    const d = [0, 1, 2].map((k) => from[k]! - c[k]!)
    const len = Math.hypot(...d)
    return c.map((v, k) => v + (TARGETS[0]!.radius * d[k]!) / len) as [number, number, number]
  }
  for (const [i, target] of TARGETS.entries()) {
    const m = await pick(transformPoint(onB, ...facing(target.centre, STATION_B.position)))
    expect(m?.instanceId, `target ${i + 1} on B`).toBe(b.id)
    const h = await pick(facing(target.centre, STATION_A.position))
    expect(h?.instanceId, `target ${i + 1} on A`).toBe(a.id)
    await expect.poll(async () => (await hook()).complete).toBe(i + 1)
  }
  await expect.poll(() => page.getByTestId('align-pair').count()).toBe(4)
  // The fourth pair is held out as a check point.
  await page.getByTestId('align-pair-check').nth(3).check()
  await shot(page, '50-align-pairs')

  await page.getByTestId('align-fit').click()
  await expect.poll(async () => (await hook()).registration?.fitRms ?? null, { timeout: 20_000 }).not.toBeNull()
  const fitted = (await hook()).registration!
  const api = async (id: string) => ((await (await page.request.get(`${t.url}/api/registrations/${id}`)).json()) as { registration: Registration }).registration
  const r1 = await api(fitted.id)
  expect(r1.fit!.count).toBe(3)
  expect(r1.fit!.checkCount).toBe(1)
  // The demo's targets are fitted to about half a millimetre (the generator's noise over a few hundred points).
  expect(r1.fit!.rms!).toBeLessThan(0.003)
  expect(r1.residuals!.checkRms!).toBeLessThan(0.005)
  const mm = (m: number) => `${(m * 1000).toFixed(1)}\u00a0mm`
  await expect.poll(() => page.getByTestId('align-rms').innerText()).toBe(mm(r1.residuals!.rms!))
  await expect.poll(() => page.getByTestId('align-check-rms').innerText()).toContain(mm(r1.residuals!.checkRms!))
  await expect.poll(() => page.getByTestId('align-pair-residual').nth(3).innerText()).toBe(mm(r1.pairs[3]!.distance!))
  await shot(page, '51-align-fitted')

  await page.getByTestId('align-refine').click()
  await expect.poll(async () => (await hook()).registration?.refine ?? null, { timeout: 60_000, interval: 250 }).toBe('done')
  const r2 = await api(fitted.id)
  // The demo's stations are noisy (a few millimetres): ICP may stop at its pairing noise rather than
  // converge by its step rule; either way its RMS never rises (Besl and McKay 1992).
  expect(r2.refine!.status, r2.refine!.reason ?? '').toBe('done')
  expect(r2.refine!.iterations.length).toBeGreaterThan(1)
  const rms = r2.refine!.iterations.map((i) => i.rms)
  for (let i = 1; i < rms.length; i++) expect(rms[i]!).toBeLessThanOrEqual(rms[i - 1]!)
  await expect.poll(() => page.getByTestId('align-icp').getAttribute('data-status')).toBe('done')
  await shot(page, '52-align-refined')

  const across = async () => ((await (await page.request.get(`${t.url}/api/scenes/${scene.id}/markers`)).json()) as { markers: Marker[] }).markers.find((m) => m.label === 'door width across the stations')!
  const before = await across()
  await page.getByTestId('align-accept').click()
  await expect.poll(() => page.getByTestId('align-notice').innerText(), { timeout: 20_000 }).toMatch(/Accepted/)
  const r3 = await api(fitted.id)
  expect(r3.state).toBe('accepted')
  const placed = ((await (await page.request.get(`${t.url}/api/scenes/${scene.id}`)).json()) as { scene: Scene }).scene.instances.find((i) => i.id === b.id)!
  expect(placed.matrix).toEqual(r3.matrixAfter)
  // Checked again: the invented door's 1.40 m within U, B's registration in the budget.
  await expect.poll(async () => { const m = await across(); return m.check.state !== 'pending' && m.check.basedOn > before.check.basedOn }, { timeout: 30_000 }).toBe(true)
  const after = await across()
  expect(Math.abs(after.check.value! - 2 * DOOR.halfWidth)).toBeLessThan(after.check.expandedUncertainty!)
  expect(after.check.parts.find((p) => p.name === 'B registration')!.u).toBe(r3.registrationU)
  await expect.poll(() => page.getByTestId('align-undo').isEnabled(), { timeout: 10_000 }).toBe(true)
  await shot(page, '53-align-accepted')

  // The measurement sheet: B's RMS in the scans table and the registration report.
  await page.goto(`${t.url}/projects/${projectId}/scenes/${scene.id}/sheet`)
  await page.getByTestId('registration-report').waitFor()
  const row = page.getByTestId('sheet-scans').locator('tbody tr').filter({ hasText: 'station B' })
  await expect.poll(() => row.getByTestId('sheet-registration-rms').innerText()).toBe(`${mm(r3.rms!)} (check points)`)
  await expect.poll(() => page.locator(`[data-testid="report-placement"][data-instance-id="${b.id}"] [data-testid="report-rms"]`).innerText()).toBe(`${mm(r3.rms!)} (check points)`)
  await expect.poll(() => page.getByTestId('report-residual').count()).toBe(4)
  await shot(page, '54-registration-report')

  // Back in the scene, Undo puts B where the demo had it, as a change and a record of its own.
  await page.getByRole('link', { name: 'Back to the scene' }).click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.align !== undefined, null, { timeout: 30_000 })
  await page.keyboard.press('t')
  await expect.poll(() => page.getByTestId('align-undo').isEnabled(), { timeout: 10_000 }).toBe(true)
  await page.getByTestId('align-undo').click()
  await expect.poll(() => page.getByTestId('align-notice').innerText(), { timeout: 20_000 }).toMatch(/Undone/)
  const back = ((await (await page.request.get(`${t.url}/api/scenes/${scene.id}`)).json()) as { scene: Scene }).scene.instances.find((i) => i.id === b.id)!
  back.matrix.forEach((v, i) => expect(v).toBeCloseTo(b.matrix[i]!, 12))
  expect((await api(fitted.id)).state).toBe('undone')
  expect(problems).toEqual([])
  await context.close()
})
