// The production build: `scripts/build-server.mjs` compiles the server, and plain node runs it with no
// TypeScript loader (no tsx on its command line, none in the ingest worker or the compute threads it starts):
// it migrates an empty database with the compiled migrations, seeds the demo, processes the demo's scans in its
// compiled ingest worker, and checks the demo's section and clearances in its compiled compute threads.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import supertest from 'supertest'
import { afterAll, beforeAll, expect, it } from 'vitest'
import type { Marker, Scan } from '@shared/schemas'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../../server/demo/accounts'
import { createTestDatabase } from '../utils/db'

let server: ChildProcess
let url = ''
let output = ''
let db: Awaited<ReturnType<typeof createTestDatabase>>
const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-built-'))

beforeAll(async () => {
  const build = spawnSync(process.execPath, ['scripts/build-server.mjs'], { encoding: 'utf8' })
  expect(build.status, build.stderr).toBe(0)
  db = await createTestDatabase('template1')
  server = spawn(process.execPath, ['build/server/index.js'], {
    env: {
      PATH: process.env.PATH,
      SPANMARK_ENV: 'development',
      DATABASE_URL: db.url,
      PORT: '0',
      HOST: '127.0.0.1',
      S3_FAKE: '1',
      S3_FAKE_PORT: '0',
      SMTP_PORT: '0',
      DATA_DIR: dataDir,
      SPANMARK_DEMO: '1',
      SPANMARK_DEV_MAILBOX: '1',
      COMPUTE_THREADS: '1',
      LOG_FORMAT: 'json',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  server.stdout!.on('data', (b: Buffer) => (output += b.toString()))
  server.stderr!.on('data', (b: Buffer) => (output += b.toString()))
  const deadline = Date.now() + 60_000
  while (!url) {
    const m = /Spanmark is running at (http:\/\/\S+)/.exec(output)
    if (m) url = m[1]!
    else if (server.exitCode !== null || Date.now() > deadline) throw new Error(`the compiled server did not start:\n${output.slice(-3000)}`)
    else await new Promise((r) => setTimeout(r, 100))
  }
}, 90_000)

afterAll(async () => {
  if (server && server.exitCode === null) {
    server.kill('SIGTERM')
    await new Promise((r) => server.once('exit', r))
  }
  await db?.drop()
  fs.rmSync(dataDir, { recursive: true, force: true })
})

it('runs with plain node: its processes carry no TypeScript loader', () => {
  expect(server.spawnargs).toEqual([process.execPath, 'build/server/index.js'])
  const ps = spawnSync('ps', ['-o', 'args=', '--ppid', String(server.pid)], { encoding: 'utf8' }).stdout
  // The ingest worker: the compiled file, started by plain node.
  expect(ps).toMatch(/build\/server\/worker\.js/)
  expect(ps).not.toMatch(/tsx/)
})

it('processes the demo scans in its compiled worker and checks the demo markers in its compiled threads', { timeout: 120_000 }, async () => {
  const agent = supertest.agent(url).set('Origin', url)
  await agent.get('/api/health').expect(200)
  await agent.post('/api/auth/sign-in').send({ email: DEMO_ACCOUNTS[0]!.email, password: DEMO_PASSWORD }).expect(200)
  const projectId = (await agent.get('/api/projects').expect(200)).body.projects[0].id as string
  const deadline = Date.now() + 100_000
  let scans: Scan[] = []
  let markers: Marker[] = []
  for (;;) {
    scans = (await agent.get(`/api/projects/${projectId}/scans`).expect(200)).body.scans
    const sceneId = (await agent.get(`/api/projects/${projectId}/scenes`).expect(200)).body.scenes[0].id as string
    markers = (await agent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers
    const done = scans.length > 0 && scans.every((s) => s.status === 'ready' || s.status === 'failed') && markers.length > 0 && markers.every((m) => m.check.state !== 'pending')
    if (done || Date.now() > deadline) break
    await new Promise((r) => setTimeout(r, 250))
  }
  expect(scans.map((s) => s.status)).toEqual(scans.map(() => 'ready'))
  // A section's free opening and the clearances through it are computed in the compute threads.
  const section = markers.find((m) => m.kind === 'section')!
  expect(section.check.state, section.check.reason ?? '').toBe('checked')
  const clearances = markers.filter((m) => m.kind === 'clearance')
  expect(clearances.length).toBeGreaterThan(0)
  for (const c of clearances) expect(c.check.result?.kind, c.check.reason ?? '').toBe('clearance')
  expect(output).not.toMatch(/"level":(50|60)/)
})
