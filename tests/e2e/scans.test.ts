// Scans in through the page, in Chromium: the demo's scans are there; a measurer uploads one file of each
// format at once, watches them go from transfer to ready with their figures, and a bad file shows its
// message. Screenshots go to tests/output/screenshots/.
import '../utils/browserLane'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { DEMO_ACCOUNTS, DEMO_GUEST, DEMO_PASSWORD, DEMO_PROJECT } from '../../server/demo/accounts'
import { DEMO_SCENE } from '../../server/demo/synth/demoScans'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { launchBrowser, shot, watchConsole } from '../utils/browser'
import { startTestServer, tokenOf, type TestServer } from '../utils/server'

let t: TestServer
let browser: Browser
const dir = fs.mkdtempSync(path.join('/tmp', 'spanmark-e2e-scans-'))

function files(): Record<string, { bytes: Buffer; points: number | null }> {
  const grid = (n: number) => {
    const p = new Float64Array(n * n * 3)
    for (let i = 0; i < n * n; i++) p.set([(i % n) * 0.01, Math.floor(i / n) * 0.01, 0.001 * Math.sin(i)], i * 3)
    return p
  }
  const readme = fs.readFileSync('README.md', 'utf8')
  const log = /```\n(# spanmark-station-log 1\n[\s\S]*?)```/.exec(readme)![1]!
  const pcd = ['# .PCD v0.7', 'VERSION 0.7', 'FIELDS x y z', 'SIZE 4 4 4', 'TYPE F F F', 'COUNT 1 1 1', 'WIDTH 4', 'HEIGHT 1', 'VIEWPOINT 0 0 0 1 0 0 0', 'POINTS 4', 'DATA ascii', '0 0 0', '1 0 0', '0 1 0', '1 1 0.2', ''].join('\n')
  return {
    'bench-plate.ply': { bytes: writeBinaryPly({ count: 400, positions: grid(20) }), points: 400 },
    'corner.xyz': { bytes: Buffer.from('x;y;z\n0;0;0\n0,5;0;0\n0;0,5;0\n0,5;0,5;0,25\n'), points: 4 },
    'square.pcd': { bytes: Buffer.from(pcd), points: 4 },
    'crate.las': { bytes: fs.readFileSync('tests/fixtures/crate.las'), points: 5220 },
    'crate.laz': { bytes: fs.readFileSync('tests/fixtures/crate.laz'), points: 5220 },
    'station-07.log': { bytes: Buffer.from(log), points: 2 },
    'site-notes.txt': { bytes: Buffer.from('Dear colleague,\nthe scans from Tuesday are attached.\n'), points: null },
  }
}

beforeAll(async () => {
  if (!fs.existsSync('dist/index.html')) throw new Error('browser tests need the client build: run them through `npm test`')
  t = await startTestServer({ seedDemo: true }, { WORKER: 'spawn' })
  browser = await launchBrowser()
})
afterAll(async () => {
  await browser?.close()
  await t?.stop()
  fs.rmSync(dir, { recursive: true, force: true })
})

async function openDemoAs(role: string): Promise<{ page: Page; problems: string[] }> {
  const account = DEMO_ACCOUNTS.find((a) => a.role === role)!
  const context = await browser.newContext({ viewport: { width: 1440, height: 900 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in`)
  await page.getByTestId('sign-in-email').fill(account.email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(/\/projects$/)
  await page.getByTestId('project-card').filter({ hasText: DEMO_PROJECT.name }).click()
  await page.waitForURL(/\/projects\/[0-9a-f-]{36}$/)
  return { page, problems }
}

it('uploads one file of each format from the page and shows each one ready with its figures, and the bad one failed', { timeout: 120_000 }, async () => {
  const { page, problems } = await openDemoAs('measurer')
  // The demo's own scans (the door's two stations, the chest's two), processed by the worker after seeding.
  const demoScans = DEMO_SCENE.placements.length
  await expect.poll(() => page.locator('[data-testid="scan-row"][data-status="ready"]').count(), { timeout: 60_000 }).toBe(demoScans)
  await expect.poll(() => page.getByTestId('scan-laser-caution').count()).toBeGreaterThan(0)
  await shot(page, '20-demo-scans')

  const all = files()
  const paths = Object.entries(all).map(([name, f]) => {
    const p = path.join(dir, name)
    fs.writeFileSync(p, f.bytes)
    return p
  })
  await page.getByTestId('scan-upload-input').setInputFiles(paths)
  await expect.poll(() => page.getByTestId('scan-row').count(), { timeout: 30_000 }).toBe(demoScans + paths.length)
  await expect.poll(() => page.locator('[data-testid="scan-row"][data-status="queued"], [data-testid="scan-row"][data-status="processing"]').count(), { timeout: 60_000 }).toBe(0)
  await shot(page, '21-scans-uploaded')
  for (const [name, f] of Object.entries(all)) {
    const row = page.getByTestId('scan-row').filter({ hasText: name })
    if (f.points === null) {
      expect(await row.getAttribute('data-status'), name).toBe('failed')
      expect(await row.getByTestId('scan-error').textContent()).toContain("line 1: the content is text but not points in numeric columns ('Dear colleague,')")
    } else {
      expect(await row.getAttribute('data-status'), name).toBe('ready')
      expect((await row.getByTestId('scan-point-count').textContent())!.replace(/\D/g, ''), name).toBe(String(f.points))
    }
  }
  expect(problems).toEqual([])
})

it('hides upload controls from a guest', async () => {
  // The demo's guest has no account: the viewing pass e-mailed at seeding, opened in the browser.
  const link = (await t.waitForMail(DEMO_GUEST.email)).links.find((l) => l.includes('/passes/open#token='))!
  expect(tokenOf(link)).toBeTruthy()
  const context = await browser.newContext({ viewport: { width: 1440, height: 900 } })
  const page = await context.newPage()
  await page.goto(link)
  await page.waitForURL(/\/projects\/[0-9a-f-]{36}$/)
  await page.getByTestId('guest-badge').waitFor()
  await expect.poll(() => page.getByTestId('scan-row').count()).toBeGreaterThan(0)
  expect(await page.getByTestId('scan-upload-input').count()).toBe(0)
  expect(await page.getByTestId('scan-delete').count()).toBe(0)
  await shot(page, '22-scans-as-guest')
})
