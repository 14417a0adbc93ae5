// The foundation flows in Chromium against the real server and database: sign up, sign in, create a
// project, open the demo project and read its members and roles, reset a password through the dev
// mailbox. Screenshots go to tests/output/screenshots/ to be looked at.
import '../utils/browserLane'
import fs from 'node:fs'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { DEMO_ACCOUNTS, DEMO_PASSWORD, DEMO_PROJECT } from '../../server/demo/accounts'
import { launchBrowser, shot, watchConsole } from '../utils/browser'
import { startTestServer, type TestServer } from '../utils/server'

let t: TestServer
let browser: Browser

beforeAll(async () => {
  if (!fs.existsSync('dist/index.html')) throw new Error('browser tests need the client build: run them through `npm test`')
  t = await startTestServer({ seedDemo: true })
  browser = await launchBrowser()
})
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

async function newPage(width = 1366, height = 860): Promise<{ page: Page; problems: string[] }> {
  const context = await browser.newContext({ viewport: { width, height } })
  const page = await context.newPage()
  return { page, problems: watchConsole(page) }
}

async function signIn(page: Page, email: string, password: string) {
  await page.getByTestId('sign-in-email').fill(email)
  await page.getByTestId('sign-in-password').fill(password)
  await page.getByTestId('sign-in-submit').click()
}

describe('foundation in the browser', () => {
  it('signs up, creates a project, signs out and back in', async () => {
    const { page, problems } = await newPage()
    await page.goto(`${t.url}/projects`)
    await page.waitForURL(/\/sign-in\?redirect=/)
    await shot(page, '01-sign-in')
    await page.getByTestId('sign-up-link').click()
    await page.waitForURL(/\/sign-up/)
    // Inline validation from the shared schema before anything is sent.
    await page.getByTestId('sign-up-email').fill('not an address')
    await page.getByTestId('sign-up-password').fill('short')
    await page.getByTestId('sign-up-submit').click()
    await expect.poll(() => page.getByText('must be an e-mail address').count()).toBeGreaterThan(0)
    await expect.poll(() => page.getByText('must be at least 10 characters').count()).toBeGreaterThan(0)
    await shot(page, '02-sign-up-invalid')
    await page.getByTestId('sign-up-name').fill('Wren Abernathy')
    await page.getByTestId('sign-up-email').fill('wren@spanmark.example')
    await page.getByTestId('sign-up-password').fill('a long enough password')
    await page.getByTestId('sign-up-submit').click()
    // No session yet: the page says where the next step is (the same whether or not the address had an account).
    await page.getByTestId('sign-up-sent').waitFor()
    expect(await page.getByTestId('sign-up-sent-to').textContent()).toBe('wren@spanmark.example')
    expect((await t.agent().get('/api/session')).body.user).toBeNull()
    await shot(page, '02b-sign-up-check-inbox')
    await page.goto(`${t.url}/dev/mail`)
    const confirmation = page.getByTestId('dev-mail-item').filter({ hasText: 'Confirm your address' }).first()
    await confirmation.waitFor({ timeout: 10_000 })
    await confirmation.click()
    await page.getByTestId('dev-mail-link').filter({ hasText: '/confirm-email' }).first().click()
    // The link confirms and signs in; its token leaves the address bar at once.
    await page.waitForURL(/\/projects$/)
    expect(page.url()).not.toContain('token=')
    await shot(page, '02c-confirmed-signed-in')
    expect(await page.getByTestId('confirm-notice').count()).toBe(0)
    await page.getByTestId('project-create-empty').or(page.getByTestId('project-create-open')).first().click()
    await page.getByTestId('project-create-name').fill('Boathouse hatch')
    await page.getByTestId('project-create-description').fill('Will the mast pass the hatch?')
    await page.getByTestId('project-create-submit').click()
    await page.waitForURL(/\/projects\/[0-9a-f-]{36}$/)
    await expect.poll(() => page.getByTestId('page-title').textContent()).toContain('Boathouse hatch')
    await expect.poll(() => page.getByTestId('member-row').count()).toBe(1)
    await shot(page, '03-new-project')
    await page.getByTestId('user-menu').click()
    await page.getByTestId('sign-out').click()
    await page.waitForURL(/\/sign-in/)
    await signIn(page, 'wren@spanmark.example', 'a long enough password')
    await page.waitForURL(/\/projects$/)
    await expect.poll(() => page.getByTestId('project-card').count()).toBe(1)
    expect(problems).toEqual([])
  })

  it('signs in an unconfirmed account with a notice and a way to resend the link', async () => {
    const { page, problems } = await newPage()
    await t.agent().post('/api/auth/sign-up').send({ email: 'unconfirmed@spanmark.example', password: 'a long enough password', name: 'Orrin Pending' }).expect(202)
    await page.goto(`${t.url}/sign-in`)
    await signIn(page, 'unconfirmed@spanmark.example', 'a long enough password')
    await page.waitForURL(/\/projects$/)
    await page.getByTestId('confirm-notice').waitFor()
    await page.getByTestId('confirm-notice-resend').click()
    await page.getByTestId('confirm-notice-sent').waitFor()
    await shot(page, '02d-unconfirmed-notice')
    expect(problems).toEqual([])
  })

  it('opens the demo project as its owner and shows every member with their role', async () => {
    const owner = DEMO_ACCOUNTS.find((a) => a.role === 'owner')!
    const { page, problems } = await newPage()
    await page.goto(`${t.url}/sign-in`)
    await signIn(page, owner.email, DEMO_PASSWORD)
    await page.waitForURL(/\/projects$/)
    await shot(page, '04-projects')
    await page.getByTestId('project-card').filter({ hasText: DEMO_PROJECT.name }).click()
    await page.waitForURL(/\/projects\/[0-9a-f-]{36}$/)
    await expect.poll(() => page.getByTestId('member-row').count()).toBe(DEMO_ACCOUNTS.length)
    const rows = await page.getByTestId('member-row').allTextContents()
    for (const a of DEMO_ACCOUNTS) {
      const row = rows.find((r) => r.includes(a.name))
      expect(row, a.name).toBeDefined()
      expect(row!.toLowerCase()).toContain(a.role)
    }
    // The owner's own controls are there (so the mentor's check below is not empty).
    expect(await page.getByTestId('invite-form').count()).toBe(1)
    expect(await page.getByTestId('project-passes').count()).toBe(1)
    await shot(page, '05-demo-project-members')
    expect(problems).toEqual([])
  })

  it('hides owner controls from a mentor', async () => {
    const mentor = DEMO_ACCOUNTS.find((a) => a.role === 'mentor')!
    const { page } = await newPage()
    await page.goto(`${t.url}/sign-in`)
    await signIn(page, mentor.email, DEMO_PASSWORD)
    await page.waitForURL(/\/projects$/)
    await page.getByTestId('project-card').filter({ hasText: DEMO_PROJECT.name }).click()
    await expect.poll(() => page.getByTestId('member-row').count()).toBe(DEMO_ACCOUNTS.length)
    expect(await page.getByTestId('project-delete').count()).toBe(0)
    for (const control of ['invite-form', 'project-invites', 'project-passes', 'member-role-select', 'member-remove']) {
      expect(await page.getByTestId(control).count(), control).toBe(0)
    }
    await shot(page, '06-demo-project-as-mentor')
  })

  it('resets a password through the dev mailbox', async () => {
    const measurer = DEMO_ACCOUNTS.find((a) => a.role === 'measurer')!
    const { page, problems } = await newPage()
    await page.goto(`${t.url}/sign-in`)
    await page.getByTestId('forgot-password-link').click()
    await page.getByTestId('forgot-email').fill(measurer.email)
    await page.getByTestId('forgot-submit').click()
    await page.getByTestId('forgot-sent').waitFor()
    await shot(page, '07-forgot-sent')
    await page.goto(`${t.url}/dev/mail`)
    const item = page.getByTestId('dev-mail-item').filter({ hasText: 'Reset your Spanmark password' }).first()
    await item.waitFor({ timeout: 10_000 })
    await item.click()
    await shot(page, '08-dev-mail')
    const link = page.getByTestId('dev-mail-link').filter({ hasText: '/reset-password' }).first()
    await link.click()
    await page.waitForURL(/\/reset-password/)
    // The token left the address bar as soon as the page read it.
    await expect.poll(() => page.url()).not.toContain('token=')
    await page.getByTestId('reset-password').fill('a fresh new password')
    await page.getByTestId('reset-confirm').fill('a fresh new password')
    await shot(page, '09-reset-form')
    await page.getByTestId('reset-submit').click()
    await page.waitForURL(/\/projects$/)
    await expect.poll(() => page.getByTestId('project-card').count()).toBe(1)
    const res = await t.agent().post('/api/auth/sign-in').send({ email: measurer.email, password: 'a fresh new password' })
    expect(res.status).toBe(200)
    expect(problems).toEqual([])
  })

  it('lays out on a wide monitor and on a small laptop', async () => {
    const owner = DEMO_ACCOUNTS.find((a) => a.role === 'owner')!
    for (const [w, h] of [[2560, 1200], [1024, 700]] as const) {
      const { page } = await newPage(w, h)
      await page.goto(`${t.url}/sign-in`)
      await signIn(page, owner.email, DEMO_PASSWORD)
      await page.waitForURL(/\/projects$/)
      await page.getByTestId('project-card').first().click()
      await expect.poll(() => page.getByTestId('member-row').count()).toBe(DEMO_ACCOUNTS.length)
      const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth)
      expect(overflow, `horizontal overflow at ${w}px`).toBeLessThanOrEqual(0)
      await shot(page, `10-project-${w}`)
    }
  })
})
