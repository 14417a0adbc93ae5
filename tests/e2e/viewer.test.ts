// The scene viewer in Chromium (WebGL through SwiftShader) on the seeded demo scene: points drawn and not
// blank, within the drawing limit, a click on a known stored point reads that point back, a placement
// moved through the form is still moved after a reload, and a mentor can neither move one nor see how.
import '../utils/browserLane'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { decodeTile } from '@shared/points/tileFormat'
import { transformPoint } from '@shared/geometry/rigidTransform'
import type { Scene } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { CHEST, CHEST_AT, TROLLEY } from '../../server/demo/synth/scene'
import { shot, watchConsole } from '../utils/browser'
import { startDemoScene } from '../utils/demoScene'
import type { TestServer } from '../utils/server'

let t: TestServer
let browser: Browser
let scene: Scene
let projectId: string

interface Stats {
  pointsDrawn: number
  drawLimit: number
  tilesLoaded: number
  tilesPending: number
  firstFrameMs: number | null
}
type Hook = { __spanmark: { viewer: { stats(): Stats; project(x: number, y: number, z: number): { x: number; y: number }; lastPick(): { x: number; y: number; z: number } | null; setDrawLimit(n: number): void } } }

beforeAll(async () => {
  ;({ t, browser, scene, projectId } = await startDemoScene())
}, 150_000)
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

async function openScene(role: 'measurer' | 'mentor'): Promise<{ page: Page; problems: string[] }> {
  const account = DEMO_ACCOUNTS.find((a) => a.role === role)!
  const context = await browser.newContext({ viewport: { width: 1280, height: 800 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}/scenes/${scene.id}`)
  await page.getByTestId('sign-in-email').fill(account.email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
  return { page, problems }
}

const stats = (page: Page) => page.evaluate(() => (window as unknown as Hook).__spanmark.viewer.stats())

/** Pixels of the WebGL canvas (drawn with preserveDrawingBuffer) that differ from the viewport background. */
function drawnPixels(page: Page): Promise<number> {
  return page.evaluate(() => {
    const gl = document.querySelector('[data-testid="scene-viewport"]') as HTMLCanvasElement
    const c = document.createElement('canvas')
    c.width = gl.width
    c.height = gl.height
    const ctx = c.getContext('2d')!
    ctx.drawImage(gl, 0, 0)
    const data = ctx.getImageData(0, 0, c.width, c.height).data
    let n = 0
    // Spanmark's viewport background #1E1B18; the floor grid #2E2A25 is close to it and not counted.
    for (let i = 0; i < data.length; i += 4) if (Math.abs(data[i]! - 0x1e) + Math.abs(data[i + 1]! - 0x1b) + Math.abs(data[i + 2]! - 0x18) > 60) n++
    return n
  })
}

describe('scene viewer', () => {
  it('draws the demo scene, not blank, within the drawing limit', async () => {
    const { page, problems } = await openScene('measurer')
    const s = await stats(page)
    expect(s.pointsDrawn).toBeGreaterThan(100_000)
    expect(s.pointsDrawn).toBeLessThanOrEqual(s.drawLimit)
    expect(await drawnPixels(page)).toBeGreaterThan(20_000)
    await shot(page, '30-scene-viewer')
    await page.evaluate(() => (window as unknown as Hook).__spanmark.viewer.setDrawLimit(50_000))
    // The next frames select again within the new budget (the view redraws on demand).
    await page
      .waitForFunction(() => { const s = (window as unknown as Hook).__spanmark.viewer.stats(); return s.tilesPending === 0 && s.pointsDrawn <= 50_000 }, null, { timeout: 10_000 })
      .catch(() => {})
    const small = await stats(page)
    expect(small.drawLimit).toBe(50_000)
    expect(small.pointsDrawn).toBeLessThanOrEqual(50_000)
    expect(small.pointsDrawn).toBeGreaterThan(0)
    expect(problems).toEqual([])
  })

  it('reads back a known stored point when it is clicked', async () => {
    const agent = t.agent()
    await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS[1]!.email, password: DEMO_PASSWORD }).expect(200)
    // Station B sees the chest too but is only roughly placed: its copy of the chest's front lies about 20 cm off
    // and may be the drawn point nearest the cursor. Hidden here, as a person would hide it, and shown again after.
    const b = scene.instances.find((i) => /station B/.test(i.scanName))!
    await agent.patch(`/api/instances/${b.id}`).send({ visible: false }).expect(200)
    try {
      await readBackChestPoint(agent)
    } finally {
      await agent.patch(`/api/instances/${b.id}`).send({ visible: true }).expect(200)
    }
  })

  async function readBackChestPoint(agent: ReturnType<TestServer['agent']>): Promise<void> {
    const { page } = await openScene('measurer')
    // A stored point of the chest from its front station's root tile, the one on its front face (towards the yard
    // and the camera, seen nearly head-on) nearest the face's middle.
    const chest = scene.instances.find((i) => i.scanName === 'Chart chest, front station')!
    const res = await agent.get(`/api/scans/${chest.scanId}/tiles/r`).buffer(true).parse((r, cb) => {
      const parts: Buffer[] = []
      r.on('data', (c: Buffer) => parts.push(c))
      r.on('end', () => cb(null, Buffer.concat(parts)))
    })
    const bytes = res.body as Buffer
    const tile = decodeTile(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength))
    let best = -1
    let bestScore = Infinity
    const front = CHEST_AT[1] - CHEST.depth / 2
    const middle = CHEST_AT[2] + TROLLEY.height + CHEST.height / 2
    for (let i = 0; i < tile.count; i++) {
      const [x, y, z] = transformPoint(chest.matrix, ...([0, 1, 2].map((a) => tile.origin[a]! + tile.positions[i * 3 + a]!) as [number, number, number]))
      const score = Math.hypot(x - CHEST_AT[0], z - middle) + 10 * Math.abs(y - front)
      if (score < bestScore) (bestScore = score), (best = i)
    }
    const local = [0, 1, 2].map((a) => tile.origin[a]! + tile.positions[best * 3 + a]!) as [number, number, number]
    const target = transformPoint(chest.matrix, ...local)
    const px = await page.evaluate(([x, y, z]) => (window as unknown as Hook).__spanmark.viewer.project(x!, y!, z!), target)
    const box = (await page.getByTestId('scene-viewport').boundingBox())!
    await page.mouse.click(box.x + px.x, box.y + px.y)
    await page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.lastPick() !== null, null, { timeout: 10_000 })
    await expect.poll(() => page.getByTestId('pick-readout').getAttribute('data-refined'), { timeout: 10_000 }).toBe('true')
    const picked = (await page.evaluate(() => (window as unknown as Hook).__spanmark.viewer.lastPick()))!
    // The click lands within half a pixel of the point's image (the mouse moves in whole pixels) and the pick
    // takes the drawn point nearest the cursor, so a neighbour on the chest's front within about a pixel of the
    // image can win: at most one pixel's footprint on the face, and never less than 2 cm (derived from the
    // picking rule, app/viewer/picking.ts). A face seen obliquely (the chest's top, far off in this view) fails
    // this: the front-most points under the cursor then lie outside the rule's depth window of the target.
    const step = await page.evaluate(([x, y, z]) => {
      const v = (window as unknown as Hook).__spanmark.viewer
      const o = v.project(x!, y!, z!), ax = v.project(x! + 0.01, y!, z!), ay = v.project(x!, y!, z! + 0.01)
      return Math.min(Math.hypot(ax.x - o.x, ax.y - o.y), Math.hypot(ay.x - o.x, ay.y - o.y)) / 0.01
    }, target)
    const off = Math.hypot(picked.x - target[0], picked.y - target[1], picked.z - target[2])
    expect(off).toBeLessThan(Math.max(0.02, 1 / step))
    await shot(page, '31-scene-pick')
  }

  // Two page loads of the whole scene in SwiftShader take 15-17 s on this 2-core machine: more than the default 20 s leaves under load.
  it('moves a placement through the form, and it stays moved after a reload', { timeout: 60_000 }, async () => {
    const { page } = await openScene('measurer')
    const chest = scene.instances.find((i) => i.scanName === 'Chart chest, front station')!
    await page.locator(`[data-testid="placement-row"][data-instance-id="${chest.id}"]`).getByTestId('placement-select').click()
    await page.getByTestId('placement-tx').fill('0.25')
    await page.getByTestId('placement-ty').fill('-0.9')
    await page.getByTestId('placement-rz').fill('90')
    await page.getByTestId('placement-save').click()
    const agent = t.agent()
    await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS[1]!.email, password: DEMO_PASSWORD }).expect(200)
    await expect.poll(async () => (await agent.get(`/api/scenes/${scene.id}`)).body.scene.instances.find((i: { id: string }) => i.id === chest.id).matrix[12], { timeout: 10_000 }).toBeCloseTo(0.25, 6)
    const moved = (await agent.get(`/api/scenes/${scene.id}`)).body.scene.instances.find((i: { id: string }) => i.id === chest.id).matrix as number[]
    expect(moved[13]).toBeCloseTo(-0.9, 6)
    // A quarter turn about Z: the first column is (0, 1, 0).
    expect(moved[0]).toBeCloseTo(0, 9)
    expect(moved[1]).toBeCloseTo(1, 9)
    await page.reload()
    await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
    await page.locator(`[data-testid="placement-row"][data-instance-id="${chest.id}"]`).getByTestId('placement-select').click()
    await expect.poll(() => page.getByTestId('placement-tx').inputValue()).toMatch(/^0\.25/)
    await shot(page, '32-placement-moved')
  })

  it('shows a mentor the placements read-only, and the API refuses the mentor a move', async () => {
    const { page } = await openScene('mentor')
    const chest = scene.instances.find((i) => i.scanName === 'Chart chest, front station')!
    await page.locator(`[data-testid="placement-row"][data-instance-id="${chest.id}"]`).getByTestId('placement-select').click()
    expect(await page.getByTestId('placement-save').count()).toBe(0)
    expect(await page.getByTestId('placement-add').count()).toBe(0)
    expect(await page.getByTestId('placement-tx').getAttribute('readonly')).not.toBeNull()
    const status = await page.evaluate(async ([id, origin]) => {
      const r = await fetch(`/api/instances/${id}`, { method: 'PATCH', headers: { 'content-type': 'application/json', Origin: origin! }, body: JSON.stringify({ visible: false }) })
      return r.status
    }, [chest.id, t.url])
    expect(status).toBe(403)
    await shot(page, '33-scene-as-mentor')
  })
})
