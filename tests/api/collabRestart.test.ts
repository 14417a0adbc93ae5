// A server killed with SIGKILL mid-session and started again has every live update any client saw
// (server/collab/README.md): the server runs as its own process here, so it can really be killed.
import { spawn, type ChildProcess } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, expect, it } from 'vitest'
import supertest from 'supertest'
import type { WebsocketProvider } from 'y-websocket'
import { createDb, createPool } from '../../server/db'
import { createTestDatabase } from '../utils/db'
import { liveClient } from '../utils/live'

let database: Awaited<ReturnType<typeof createTestDatabase>>
let child: ChildProcess | null = null
const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-restart-'))
const providers: WebsocketProvider[] = []

async function startServer(): Promise<string> {
  const proc = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
    env: { ...process.env, SPANMARK_ENV: 'test', DATABASE_URL: database.url, PORT: '0', SMTP_PORT: '0', MAIL_FAKE: '1', S3_FAKE: '1', S3_FAKE_PORT: '0', DATA_DIR: dataDir, WORKER: 'none', LOG_LEVEL: 'warn' },
    stdio: ['ignore', 'pipe', 'inherit'],
  })
  child = proc
  return new Promise((resolve, reject) => {
    let out = ''
    proc.stdout!.on('data', (chunk: Buffer) => {
      out += chunk.toString()
      const m = /running at (http:\/\/\S+)/.exec(out)
      if (m) resolve(m[1]!)
    })
    proc.once('exit', (code) => reject(new Error(`the server exited (${code}) before it was ready: ${out}`)))
  })
}

function connect(url: string, cookie: string, sceneId: string) {
  const c = liveClient(url, cookie, sceneId)
  providers.push(c.provider)
  return c
}

async function until(check: () => boolean, ms = 10_000): Promise<void> {
  const end = Date.now() + ms
  while (!check()) {
    if (Date.now() > end) throw new Error('timed out')
    await new Promise((r) => setTimeout(r, 20))
  }
}

beforeAll(async () => {
  database = await createTestDatabase()
})
afterAll(async () => {
  for (const p of providers) p.destroy()
  child?.kill('SIGKILL')
  await database?.drop()
  fs.rmSync(dataDir, { recursive: true, force: true })
})

it('keeps every update a client saw when the server is killed with SIGKILL and started again', { timeout: 90_000 }, async () => {
  let url = await startServer()
  const agent = supertest.agent(url).set('Origin', url)
  // Sign-up answers 202 with no session (it reveals no account); an unconfirmed account signs in with its password.
  await agent.post('/api/auth/sign-up').send({ email: 'restart@spanmark.example', password: 'correct horse battery', name: 'Restart Owner' }).expect(202)
  await agent.post('/api/auth/sign-in').send({ email: 'restart@spanmark.example', password: 'correct horse battery' }).expect(200)
  const cookie = String((await supertest(url).post('/api/auth/sign-in').set('Origin', url).send({ email: 'restart@spanmark.example', password: 'correct horse battery' }).expect(200)).headers['set-cookie']![0]).split(';')[0]!
  const projectId = (await agent.post('/api/projects').send({ name: 'Restart' }).expect(201)).body.project.id
  const sceneId = (await agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Restart scene' }).expect(201)).body.scene.id
  const scan = await agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'three.xyz').expect(202)
  const pool = createPool(database.url)
  const db = createDb(pool)
  await db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  const instanceId = (await agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id

  const a = connect(url, cookie, sceneId), b = connect(url, cookie, sceneId)
  await until(() => a.provider.synced && b.provider.synced)
  const ids = Array.from({ length: 30 }, (_, i) => `7e570000-0000-4000-8000-${String(i).padStart(12, '0')}`)
  for (const [i, id] of ids.entries()) {
    a.markers.set(id, { kind: 'distance', label: `live ${i}`, anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1 + i, y: 0, z: 0 }], params: {} })
  }
  // B has seen every one: the server sent them, so it had stored them.
  await until(() => ids.every((id) => b.markers.has(id)))
  child!.kill('SIGKILL')
  await new Promise((r) => child!.once('exit', r))
  for (const p of providers.splice(0)) p.destroy()

  url = await startServer()
  const fresh = connect(url, cookie, sceneId)
  await until(() => fresh.provider.synced)
  expect(ids.filter((id) => !fresh.markers.has(id))).toEqual([])
  expect((fresh.markers.get(ids[29]!) as { label: string }).label).toBe('live 29')
  // And the API has them all, mirrored from the document (on load, if the kill came first).
  const listed = (await supertest.agent(url).set('Origin', url).set('Cookie', cookie).get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers as { id: string }[]
  expect(ids.filter((id) => !listed.some((m) => m.id === id))).toEqual([])
  await db.destroy()
})
