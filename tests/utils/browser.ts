import fs from 'node:fs'
import path from 'node:path'
import { chromium, type Browser, type Page } from 'playwright-core'

export const SCREENSHOTS = path.resolve('tests/output/screenshots')

/** Debian's Chromium, headless, with the flags that keep it off this machine's closed network. */
export async function launchBrowser(): Promise<Browser> {
  if (!fs.existsSync('/usr/bin/chromium')) throw new Error('browser tests need /usr/bin/chromium: run them through `npm test`, which installs it')
  return chromium.launch({
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--enable-unsafe-swiftshader'],
  })
}

export async function shot(page: Page, name: string): Promise<void> {
  fs.mkdirSync(SCREENSHOTS, { recursive: true })
  await page.screenshot({ path: path.join(SCREENSHOTS, `${name}.png`), fullPage: true })
}

/** Collects page errors and failed same-origin requests, so a broken page fails the test. */
export function watchConsole(page: Page): string[] {
  const problems: string[] = []
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`))
  page.on('console', (m) => {
    if (m.type() === 'error' && !/401|404|409|400/.test(m.text())) problems.push(`console: ${m.text()}`)
  })
  return problems
}

type PageHooks = {
  __spanmark?: {
    markers?: { list(): { label: string; state: string }[] }
    live?: { status(): string; ready(): boolean }
  }
}

/**
 * Waits until the page shows no marker pending; on time-out the error names the markers still pending and the
 * page's live state (whether both documents had synced), so a failure says which side held it up.
 */
export async function waitNonePending(page: Page, timeout: number): Promise<void> {
  try {
    await page.waitForFunction(() => {
      const list = (window as unknown as PageHooks).__spanmark?.markers?.list()
      return !!list && list.every((m) => m.state !== 'pending')
    }, null, { timeout })
  } catch (err) {
    const seen = await page
      .evaluate(() => {
        const h = (window as unknown as PageHooks).__spanmark
        return { pending: h?.markers?.list().filter((m) => m.state === 'pending').map((m) => m.label), live: h?.live ? { status: h.live.status(), ready: h.live.ready() } : null }
      })
      .catch(() => null)
    throw new Error(`markers still pending after ${timeout} ms on the page: ${JSON.stringify(seen)}`, { cause: err })
  }
}
