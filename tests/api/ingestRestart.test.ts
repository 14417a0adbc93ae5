// The ingest job survives its worker being killed: the queue and the scan's state live in PostgreSQL,
// the supervisor starts a new worker, the stale scan is queued again and processed from scratch. Two
// workers share the queue: the one holding the scan is killed while the other runs.
import { afterAll, beforeAll, expect, it } from 'vitest'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { upload, waitForScan } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn', WORKERS: '2' })
})
afterAll(async () => {
  await t?.stop()
})

it('reaches ready with the right count after the worker is killed with SIGKILL mid-ingest', { timeout: 120_000 }, async () => {
  const owner = await signUpAgent(t)
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Restart' }).expect(201)).body.project.id
  const n = 3_000_000
  const positions = new Float64Array(n * 3)
  for (let i = 0; i < n; i++) {
    positions[i * 3] = (i % 2000) * 0.005
    positions[i * 3 + 1] = Math.floor(i / 2000) * 0.005
    positions[i * 3 + 2] = Math.sin(i * 0.01) * 0.01
  }
  const res = await upload(owner.agent, projectId, writeBinaryPly({ count: n, positions }), 'big.ply').expect(202)
  const scanId = res.body.scan.id as string
  await waitForScan(owner.agent, scanId, (s) => s.status === 'processing' || s.status === 'ready', 60_000, 5)
  expect(t.server.workers).toHaveLength(2)
  const holder = (await t.server.services.db.selectFrom('scans').select('claimed_by').where('id', '=', scanId).executeTakeFirstOrThrow()).claimed_by
  const held = t.server.workers.find((w) => w.claimName === holder)!
  const other = t.server.workers.find((w) => w !== held)!
  const victim = held.pid!
  const survivor = other.pid
  process.kill(victim, 'SIGKILL')
  const mid = (await owner.agent.get(`/api/scans/${scanId}`).expect(200)).body.scan
  expect(mid.status, 'killed while processing').toBe('processing')
  const { scan } = await waitForScan(owner.agent, scanId, undefined, 100_000, 200)
  expect(scan.status, scan.error ?? '').toBe('ready')
  expect(scan.pointCount).toBe(n)
  expect(held.pid).not.toBe(victim)
  expect(other.pid, 'the other worker ran on').toBe(survivor)
  const stored = await t.server.services.db.selectFrom('scan_tiles').select((eb) => eb.fn.sum<string>('point_count').as('n')).where('scan_id', '=', scanId).executeTakeFirstOrThrow()
  expect(Number(stored.n), 'no tiles of the killed attempt left behind').toBe(n)
})
