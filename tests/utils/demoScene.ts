import fs from 'node:fs'
import type { Browser } from 'playwright-core'
import type { Scene } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { launchBrowser } from './browser'
import { waitForScan } from './scans'
import { startTestServer, type TestServer } from './server'

/** A server with the seeded demo, its scans processed, and Chromium: what the browser tests start from. */
export async function startDemoScene(): Promise<{ t: TestServer; browser: Browser; scene: Scene; projectId: string }> {
  if (!fs.existsSync('dist/index.html')) throw new Error('browser tests need the client build: run them through `npm test`')
  const t = await startTestServer({ seedDemo: true }, { WORKER: 'spawn' })
  const browser = await launchBrowser()
  const agent = t.agent()
  await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS[1]!.email, password: DEMO_PASSWORD }).expect(200)
  const projectId = (await agent.get('/api/projects').expect(200)).body.projects[0].id as string
  const sceneId = (await agent.get(`/api/projects/${projectId}/scenes`).expect(200)).body.scenes[0].id as string
  const scene = (await agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene as Scene
  for (const i of scene.instances) await waitForScan(agent, i.scanId, undefined, 100_000, 200)
  return { t, browser, scene, projectId }
}
