import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { chromium } from 'playwright-core'
import type { ViewerStats } from '../app/viewer/types'
import { startBenchServer } from './lib/benchServer'
import { writeSyntheticPly } from './lib/syntheticScans'

/**
 * Viewer bench: a scan of `points` points placed in a scene, opened in headless Chromium (software GL
 * through SwiftShader here, so frame times are indicative only). Reports the time from the view's
 * creation to the first frame with points (target: under 1 s, coarse level first), the points drawn
 * against the budget, and the median frame time while the view settles.
 */
export interface ViewerBenchRow {
  points: number
  firstFrameMs: number
  pointsDrawn: number
  drawLimit: number
  tilesLoaded: number
  medianFrameMs: number
}


export async function runViewerBench(points: number, log: (l: string) => void = () => {}): Promise<ViewerBenchRow> {
  if (!fs.existsSync('dist/index.html')) throw new Error('the viewer bench needs the client build (scripts/bench.mjs builds it)')
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-viewer-bench-'))
  const browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--enable-unsafe-swiftshader'],
  })
  try {
    const file = path.join(folder, 'viewer.ply')
    writeSyntheticPly(file, points)
    log(`viewer bench: ingesting ${points / 1e6} M points...`)
    const worker = await bench.startWorker()
    const { scanId } = await bench.ingest(file)
    worker.kill('SIGTERM')
    const json = { ...bench.headers, 'content-type': 'application/json' }
    const scene = (await (await fetch(`${bench.url}/api/projects/${bench.projectId}/scenes`, { method: 'POST', headers: json, body: JSON.stringify({ name: 'Bench' }) })).json()) as { scene: { id: string } }
    await fetch(`${bench.url}/api/scenes/${scene.scene.id}/instances`, { method: 'POST', headers: json, body: JSON.stringify({ scanId }) })
    const context = await browser.newContext({ viewport: { width: 1600, height: 900 } })
    const [name, value] = bench.headers.cookie!.split('=') as [string, string]
    await context.addCookies([{ name, value, url: bench.url }])
    const page = await context.newPage()
    await page.goto(`${bench.url}/projects/${bench.projectId}/scenes/${scene.scene.id}`)
    await page.waitForFunction(() => (window as unknown as { __spanmark?: { viewer?: { stats(): ViewerStats } } }).__spanmark?.viewer?.stats().firstFrameMs != null, null, { timeout: 60_000 })
    // Let the view stream towards its budget, then time frames.
    await page.waitForFunction(() => (window as unknown as { __spanmark: { viewer: { stats(): ViewerStats } } }).__spanmark.viewer.stats().tilesPending === 0, null, { timeout: 120_000 }).catch(() => {})
    const stats = await page.evaluate(() => (window as unknown as { __spanmark: { viewer: { stats(): ViewerStats } } }).__spanmark.viewer.stats())
    // Passed as text: tsx's name-keeping helper (__name) does not exist inside the page.
    const frameTimes = (await page.evaluate(`new Promise((resolve) => {
      const times = []
      let last = performance.now()
      const step = (now) => {
        times.push(now - last)
        last = now
        if (times.length < 40) requestAnimationFrame(step)
        else resolve(times)
      }
      requestAnimationFrame(step)
    })`)) as number[]
    frameTimes.sort((a, b) => a - b)
    return {
      points,
      firstFrameMs: stats.firstFrameMs ?? NaN,
      pointsDrawn: stats.pointsDrawn,
      drawLimit: stats.drawLimit,
      tilesLoaded: stats.tilesLoaded,
      medianFrameMs: frameTimes[frameTimes.length >> 1]!,
    }
  } finally {
    await browser.close()
    await bench.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
}

export function formatViewerBench(r: ViewerBenchRow): string {
  return [
    `scan of ${r.points / 1e6} M points in headless Chromium (software GL):`,
    `  first frame with points ${r.firstFrameMs.toFixed(0)} ms after the view was created (target < 1000 ms)`,
    `  points drawn ${r.pointsDrawn.toLocaleString('en')} of a budget of ${r.drawLimit.toLocaleString('en')}, ${r.tilesLoaded} tiles`,
    `  median frame time ${r.medianFrameMs.toFixed(1)} ms (indicative: SwiftShader)`,
  ].join('\n')
}
