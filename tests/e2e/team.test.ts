// Team access in Chromium on the seeded demo: the owner invites a new person by e-mail, the link is taken
// from the dev mailbox and followed, the person signs up with the invited address and joins; the demo's
// guest opens the viewing pass from the dev mailbox, sees the demo scene read-only, and the owner's revoke
// ends the guest's page at once. Screenshots go to tests/output/screenshots/ to be looked at.
import '../utils/browserLane'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import type { Scene } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_GUEST, DEMO_PASSWORD, DEMO_PROJECT } from '../../server/demo/accounts'
import { shot, watchConsole } from '../utils/browser'
import { startDemoScene } from '../utils/demoScene'
import type { TestServer } from '../utils/server'

let t: TestServer
let browser: Browser
let scene: Scene
let projectId: string

beforeAll(async () => {
  ;({ t, browser, scene, projectId } = await startDemoScene())
}, 150_000)
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

async function newPage(width = 1440, height = 900): Promise<{ page: Page; problems: string[] }> {
  const context = await browser.newContext({ viewport: { width, height } })
  const page = await context.newPage()
  return { page, problems: watchConsole(page) }
}

async function ownerOnProject(): Promise<{ page: Page; problems: string[] }> {
  const owner = DEMO_ACCOUNTS.find((a) => a.role === 'owner')!
  const { page, problems } = await newPage()
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}`)
  await page.getByTestId('sign-in-email').fill(owner.email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/projects/${projectId}$`))
  await expect.poll(() => page.getByTestId('member-row').count(), { timeout: 10_000 }).toBeGreaterThanOrEqual(DEMO_ACCOUNTS.length)
  return { page, problems }
}

/** Opens the newest dev mailbox message whose subject matches, and follows its link to `path`. */
async function followMail(page: Page, subject: RegExp, path: string): Promise<void> {
  await page.goto(`${t.url}/dev/mail`)
  const item = page.getByTestId('dev-mail-item').filter({ hasText: subject }).first()
  await item.waitFor({ timeout: 10_000 })
  await item.click()
  await page.getByTestId('dev-mail-link').filter({ hasText: path }).first().click()
}

it('lets the owner invite a new person, who follows the e-mailed link, signs up and joins', { timeout: 90_000 }, async () => {
  const owner = await ownerOnProject()
  const email = 'wren.abernathy@spanmark.example'
  // Inline validation from the shared schema before anything is sent.
  await owner.page.getByTestId('invite-email').fill('not an address')
  await owner.page.getByTestId('invite-submit').click()
  await expect.poll(() => owner.page.getByTestId('invite-email-error').textContent()).toMatch(/must be an e-mail address/i)
  await owner.page.getByTestId('invite-email').fill(email)
  await owner.page.getByTestId('invite-submit').click()
  await expect.poll(() => owner.page.getByTestId('invite-row').count()).toBe(1)
  expect(await owner.page.getByTestId('invite-row').getAttribute('data-email')).toBe(email)
  // The same address again: the server's 409 under the field.
  await owner.page.getByTestId('invite-email').fill(email)
  await owner.page.getByTestId('invite-submit').click()
  await expect.poll(() => owner.page.getByTestId('invite-email-error').textContent()).toMatch(/already waiting/i)
  await shot(owner.page, '50-members-invite-waiting')

  const person = await newPage()
  await followMail(person.page, /invites you to/, '/invites/accept')
  await person.page.waitForURL(/\/invites\/accept/)
  // The token left the address bar as soon as the page read it.
  await expect.poll(() => person.page.url()).not.toContain('token=')
  await person.page.getByTestId('invite-card').waitFor()
  const card = await person.page.getByTestId('invite-card').innerText()
  expect(card).toContain('Measurer')
  expect(card).toContain(email)
  expect(await person.page.locator('h1').first().innerText()).toContain(DEMO_PROJECT.name)
  expect(await person.page.locator('main').innerText()).toContain('Ines Calloway invites you')
  await shot(person.page, '51-invite-accept-signed-out')

  await person.page.getByTestId('invite-sign-up').click()
  await person.page.waitForURL(/\/sign-up\?redirect=/)
  expect(await person.page.getByTestId('sign-up-email').inputValue()).toBe(email)
  await person.page.getByTestId('sign-up-name').fill('Wren Abernathy')
  await person.page.getByTestId('sign-up-password').fill('a long enough password')
  await person.page.getByTestId('sign-up-submit').click()
  // The address is proven by the e-mailed link before the invitation can be used; confirming brings the
  // person back to the invitation kept in this tab.
  await person.page.getByTestId('sign-up-sent').waitFor()
  await followMail(person.page, /Confirm your address/, '/confirm-email')
  await person.page.waitForURL(/\/invites\/accept$/)
  await person.page.getByTestId('invite-join').waitFor()
  await shot(person.page, '52-invite-accept-signed-up')
  await person.page.getByTestId('invite-join').click()
  await person.page.waitForURL(new RegExp(`/projects/${projectId}$`))
  await expect.poll(() => person.page.getByTestId('project-role').getAttribute('data-role')).toBe('measurer')
  await expect.poll(() => person.page.getByTestId('member-row').count()).toBe(DEMO_ACCOUNTS.length + 1)
  await shot(person.page, '53-invite-joined')

  await owner.page.reload()
  await expect.poll(() => owner.page.getByTestId('member-row').count()).toBe(DEMO_ACCOUNTS.length + 1)
  await owner.page.getByTestId('invites-empty').waitFor()
  expect([...owner.problems, ...person.problems]).toEqual([])
})

type Hook = { __spanmark: { viewer: { stats(): { firstFrameMs: number | null; tilesPending: number; pointsDrawn: number } }; markers: { count(): number } } }

it('opens the demo guest’s viewing pass from the mailbox, shows the scene read-only, and ends it when revoked', { timeout: 120_000 }, async () => {
  const guest = await newPage()
  await followMail(guest.page, /A viewing pass for/, '/passes/open')
  await guest.page.waitForURL(new RegExp(`/projects/${projectId}$`))
  expect(guest.page.url()).not.toContain('token=')
  await guest.page.getByTestId('guest-badge').waitFor()
  expect(await guest.page.getByTestId('guest-name').innerText()).toBe(DEMO_GUEST.name)
  await expect.poll(() => guest.page.getByTestId('project-role').getAttribute('data-role')).toBe('guest')
  await expect.poll(() => guest.page.getByTestId('scan-row').count()).toBe(scene.instances.length)
  for (const control of ['scan-upload-input', 'scene-create', 'invite-form', 'pass-form', 'project-delete', 'back-to-projects', 'user-menu', 'nav-projects']) {
    expect(await guest.page.getByTestId(control).count(), control).toBe(0)
  }
  await shot(guest.page, '54-guest-project')
  // The projects list is no place for a guest: it leads back to the one project.
  await guest.page.goto(`${t.url}/projects`)
  await guest.page.waitForURL(new RegExp(`/projects/${projectId}$`))

  await guest.page.getByTestId('scene-open').first().click()
  await guest.page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  await guest.page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await guest.page.waitForFunction(() => (window as unknown as Hook).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 30_000 })
  await expect.poll(() => guest.page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
  expect(await guest.page.evaluate(() => (window as unknown as Hook).__spanmark.viewer.stats().pointsDrawn)).toBeGreaterThan(100_000)
  // Every marker of the scene, as the API gives them to this same guest.
  const apiCount = await guest.page.evaluate(async (id) => ((await (await fetch(`/api/scenes/${id}/markers`)).json()) as { markers: unknown[] }).markers.length, scene.id)
  expect(apiCount).toBeGreaterThan(0)
  expect(await guest.page.evaluate(() => (window as unknown as Hook).__spanmark.markers.count())).toBe(apiCount)
  await guest.page.getByTestId('guest-badge').waitFor()
  for (const control of ['tool-distance', 'tool-clearance', 'placement-add', 'placement-save']) expect(await guest.page.getByTestId(control).count(), control).toBe(0)
  await shot(guest.page, '55-guest-scene')

  const owner = await ownerOnProject()
  const row = owner.page.getByTestId('pass-row').filter({ hasText: DEMO_GUEST.email })
  await expect.poll(() => row.getAttribute('data-state')).toBe('open')
  await shot(owner.page, '56-members-passes')
  await row.getByTestId('pass-revoke').click()
  await owner.page.getByTestId('confirm-accept').click()
  await expect.poll(() => row.getAttribute('data-state')).toBe('revoked')
  // The guest's open scene is cut off at once: its socket closes, and the page says the pass has ended.
  await guest.page.waitForURL(/\/passes\/open\?ended=1/, { timeout: 10_000 })
  await guest.page.getByTestId('pass-ended').waitFor()
  await guest.page.waitForTimeout(500)
  await shot(guest.page, '57-guest-pass-ended')
  await shot(owner.page, '58-members-pass-revoked')

  // The link from the mail is dead for anyone now.
  const late = await newPage()
  await followMail(late.page, /A viewing pass for/, '/passes/open')
  await late.page.getByTestId('pass-failed').waitFor()
  expect(await late.page.getByTestId('pass-failed').innerText()).toMatch(/withdrawn/)
  // PrimeVue's message fades in: let it settle before the picture.
  await late.page.waitForTimeout(500)
  await shot(late.page, '59-pass-link-dead')
  expect([...guest.problems, ...owner.problems, ...late.problems]).toEqual([])
})
