// Review in Chromium on the seeded demo scene (invented data, server/demo): the mentor comments on the
// measurer's marker and signs it off; the measurer's open page shows the comment and the signed-off state live,
// without reloading; the measurer's e-mail about the comment arrives over SMTP in dev_mail, and its link opens
// the scene with that marker selected. The rules are the product's own (server/markers/README.md, "Comments and review").
import '../utils/browserLane'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import type { Marker, Scene } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { listDevMail } from '../../server/repositories/mail'
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
    markers: { list(): { id: string; state: string }[] }
  }
}

beforeAll(async () => {
  ;({ t, browser, scene, projectId } = await startDemoScene())
}, 150_000)
afterAll(async () => {
  await browser?.close()
  await t?.stop()
})

const account = (role: 'measurer' | 'mentor') => DEMO_ACCOUNTS.find((a) => a.role === role)!

async function open(role: 'measurer' | 'mentor') {
  const context = await browser.newContext({ viewport: { width: 1600, height: 900 } })
  const page = await context.newPage()
  const problems = watchConsole(page)
  await page.goto(`${t.url}/sign-in?redirect=/projects/${projectId}/scenes/${scene.id}`)
  await page.getByTestId('sign-in-email').fill(account(role).email)
  await page.getByTestId('sign-in-password').fill(DEMO_PASSWORD)
  await page.getByTestId('sign-in-submit').click()
  await page.waitForURL(new RegExp(`/scenes/${scene.id}$`))
  await page.waitForFunction(() => (window as unknown as Partial<Hook>).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 30_000 })
  await expect.poll(() => page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
  // The seeded markers are checked once the scans are ready.
  await waitNonePending(page, 30_000)
  return { page, context, problems }
}

const row = (page: Page, markerId: string) => page.getByTestId('marker-row').filter({ has: page.locator(`[data-marker-id="${markerId}"]`) })

it('lets the mentor comment on a marker and sign it off, shows both live to its author, and mails the author', { timeout: 150_000 }, async () => {
  const owner = t.agent()
  await owner.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS.find((a) => a.role === 'owner')!.email, password: DEMO_PASSWORD }).expect(200)
  const seeded = (await owner.get(`/api/scenes/${scene.id}/markers`).expect(200)).body.markers as Marker[]
  const target = seeded.find((m) => m.label === 'door head height')!
  expect(target.createdBy?.name).toBe(account('measurer').name)

  const measurer = await open('measurer')
  const mentor = await open('mentor')
  // The author has the marker open; a measurer may comment but not review.
  await row(measurer.page, target.id).click()
  await expect.poll(() => measurer.page.getByTestId('marker-card').getAttribute('data-marker-id')).toBe(target.id)
  await expect.poll(() => measurer.page.getByTestId('marker-review-state').getAttribute('data-state')).toBe('open')
  expect(await measurer.page.getByTestId('marker-review-sign-off').count()).toBe(0)
  await measurer.page.getByTestId('marker-comments').scrollIntoViewIfNeeded()

  // The mentor opens it, writes a comment, and signs it off.
  await row(mentor.page, target.id).click()
  await expect.poll(() => mentor.page.getByTestId('marker-card').getAttribute('data-marker-id')).toBe(target.id)
  const comments = mentor.page.getByTestId('marker-comments')
  await comments.scrollIntoViewIfNeeded()
  await expect.poll(() => comments.getByTestId('marker-comments-none').count()).toBe(1)
  const text = 'Head height agrees with the door schedule within the stated uncertainty.'
  // An empty comment is refused on the page, naming why, before any request.
  await comments.getByTestId('comment-send').last().click()
  await expect.poll(() => comments.getByRole('alert').innerText()).toMatch(/must not be empty/)
  await comments.getByTestId('comment-input').last().fill(text)
  await comments.getByTestId('comment-send').last().click()
  await expect.poll(() => comments.getByTestId('comment-body').first().innerText()).toBe(text)
  await expect.poll(() => comments.getByTestId('comment-author').first().innerText()).toBe(account('mentor').name)
  const commentedAt = Date.now()
  // Live on the author's page, no reload: the comment within a second or so.
  await expect.poll(() => measurer.page.getByTestId('comment-body').first().innerText().catch(() => ''), { timeout: 3_000, interval: 50 }).toBe(text)
  expect(Date.now() - commentedAt).toBeLessThan(2_000)

  const review = mentor.page.getByTestId('marker-review')
  await review.scrollIntoViewIfNeeded()
  await shot(mentor.page, '60-review-before-sign-off')
  await review.getByTestId('marker-review-sign-off').click()
  await expect.poll(() => review.getAttribute('data-review')).toBe('signed-off')
  await expect.poll(() => review.getByTestId('marker-review-by').innerText()).toMatch(new RegExp(`^Signed off by ${account('mentor').name}`))
  const signedAt = Date.now()
  await expect.poll(() => measurer.page.getByTestId('marker-review-state').getAttribute('data-state'), { timeout: 3_000, interval: 50 }).toBe('signed-off')
  expect(Date.now() - signedAt).toBeLessThan(2_000)
  await expect.poll(() => row(measurer.page, target.id).getByTestId('marker-row-review').getAttribute('data-state')).toBe('signed-off')
  await expect.poll(() => measurer.page.getByTestId('marker-review-state').innerText()).toBe('signed off')
  await measurer.page.getByTestId('marker-review').scrollIntoViewIfNeeded()
  await shot(mentor.page, '61-review-signed-off-mentor')
  await shot(measurer.page, '62-review-seen-live-by-author')
  // The table's review filter: signed off shows just this one.
  await measurer.page.getByTestId('marker-filter-review').click()
  await measurer.page.getByRole('option', { name: 'signed off' }).click()
  await expect.poll(() => measurer.page.getByTestId('marker-row').count()).toBe(1)
  await measurer.page.getByRole('listbox').waitFor({ state: 'hidden' })
  await shot(measurer.page, '63-review-filter')

  // The author answers in the thread; the mentor sees the reply live.
  const reply = 'Thanks. The lintel anchor sits on the painted face.'
  const thread = measurer.page.getByTestId('comment-thread').first()
  await thread.getByTestId('comment-reply').click()
  await thread.getByTestId('comment-input').fill(reply)
  await thread.getByTestId('comment-send').click()
  await expect.poll(() => mentor.page.getByTestId('comment-body').nth(1).innerText().catch(() => ''), { timeout: 3_000, interval: 50 }).toBe(reply)

  // Another marker: asking for changes needs a note, refused on the page until there is one.
  const section = seeded.find((m) => m.kind === 'section')!
  await row(mentor.page, section.id).click()
  await expect.poll(() => mentor.page.getByTestId('marker-card').getAttribute('data-marker-id')).toBe(section.id)
  const sectionReview = mentor.page.getByTestId('marker-review')
  await sectionReview.scrollIntoViewIfNeeded()
  await sectionReview.getByTestId('marker-review-ask').click()
  await sectionReview.getByTestId('marker-review-ask-send').click()
  await expect.poll(() => sectionReview.getByTestId('marker-review-problem').innerText()).toMatch(/a note is required when asking for changes/)
  await sectionReview.getByTestId('marker-review-note-input').fill('Widen the slab to 0.5 m so that it holds the threshold too.')
  await shot(mentor.page, '65-review-ask-for-changes')
  await sectionReview.getByTestId('marker-review-ask-send').click()
  await expect.poll(() => sectionReview.getAttribute('data-review')).toBe('changes-asked')
  await expect.poll(() => sectionReview.getByTestId('marker-review-note').innerText()).toBe('Widen the slab to 0.5 m so that it holds the threshold too.')
  await mentor.page.getByTestId('marker-comments').scrollIntoViewIfNeeded()
  await shot(mentor.page, '66-review-changes-asked')
  // The history tells the sign-off.
  await row(mentor.page, target.id).click()
  await expect.poll(() => mentor.page.getByTestId('marker-card').getAttribute('data-marker-id')).toBe(target.id)
  await mentor.page.getByTestId('marker-history-toggle').click()
  await expect.poll(() => mentor.page.getByTestId('marker-history-row').first().getAttribute('data-action')).toBe('reviewed')
  await expect.poll(() => mentor.page.getByTestId('marker-history-row').first().innerText()).toMatch(/signed it off/)
  await mentor.page.getByTestId('marker-history').scrollIntoViewIfNeeded()
  await shot(mentor.page, '67-review-history')

  // The author's e-mail, through the fake SMTP server into dev_mail; its link selects the marker.
  const mail = await t.waitForMail(account('measurer').email)
  expect(mail.subject).toBe(`${account('mentor').name} commented on “door head height”`)
  expect(mail.text).toContain(text)
  const link = mail.links.find((l) => l.includes(`?marker=${target.id}`))!
  expect(link).toBe(`${t.url}/projects/${projectId}/scenes/${scene.id}?marker=${target.id}`)
  await measurer.page.goto(`${t.url}/dev/mail`)
  await expect.poll(() => measurer.page.getByTestId('dev-mail-subject').filter({ hasText: mail.subject }).count()).toBeGreaterThan(0)
  await measurer.page.getByTestId('dev-mail-subject').filter({ hasText: mail.subject }).first().click()
  await shot(measurer.page, '64-review-mail')
  await measurer.page.goto(link)
  await expect.poll(() => measurer.page.getByTestId('marker-card').getAttribute('data-marker-id'), { timeout: 15_000 }).toBe(target.id)
  await expect.poll(() => measurer.page.getByTestId('marker-card').getAttribute('data-review')).toBe('signed-off')
  // Nobody is told of their own comment: the mentor has no mail.
  expect((await listDevMail(t.server.services.db)).filter((m) => m.to_addresses.includes(account('mentor').email))).toHaveLength(0)
  expect([...measurer.problems, ...mentor.problems]).toEqual([])
  await measurer.context.close()
  await mentor.context.close()
})

it('carries a new role to the open scene page: it reconnects with it by itself and says so in the top bar', { timeout: 90_000 }, async () => {
  const owner = t.agent()
  await owner.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS.find((a) => a.role === 'owner')!.email, password: DEMO_PASSWORD }).expect(200)
  const members = (await owner.get(`/api/projects/${projectId}/members`).expect(200)).body.members as { userId: string; email: string }[]
  const mentorId = members.find((m) => m.email === account('mentor').email)!.userId
  // Signed in through the API in the browser's context (its cookie jar), then straight to the scene.
  const context = await browser.newContext({ viewport: { width: 1600, height: 900 } })
  const page = await context.newPage()
  const mentor = { page, context, problems: watchConsole(page) }
  const signIn = await context.request.post(`${t.url}/api/auth/sign-in`, { headers: { origin: t.url }, data: { email: account('mentor').email, password: DEMO_PASSWORD } })
  expect(signIn.status()).toBe(200)
  await page.goto(`${t.url}/projects/${projectId}/scenes/${scene.id}`)
  await expect.poll(() => page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
  await expect.poll(() => page.getByTestId('scene-role').getAttribute('data-role')).toBe('mentor')
  await owner.patch(`/api/projects/${projectId}/members/${mentorId}`).send({ role: 'measurer' }).expect(200)
  await expect.poll(() => mentor.page.getByTestId('live-notice').innerText().catch(() => ''), { timeout: 5_000 }).toMatch(/role here is now measurer/)
  expect(await mentor.page.getByTestId('live-notice').getAttribute('data-tone')).toBe('info')
  await expect.poll(() => mentor.page.getByTestId('scene-role').getAttribute('data-role'), { timeout: 5_000 }).toBe('measurer')
  await expect.poll(() => mentor.page.getByTestId('live-status').innerText(), { timeout: 10_000 }).toBe('live')
  await shot(mentor.page, '68-role-changed-live')
  await owner.patch(`/api/projects/${projectId}/members/${mentorId}`).send({ role: 'mentor' }).expect(200)
  await expect.poll(() => mentor.page.getByTestId('scene-role').getAttribute('data-role'), { timeout: 5_000 }).toBe('mentor')
  expect(mentor.problems).toEqual([])
  await mentor.context.close()
})
