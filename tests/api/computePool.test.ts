// Heavy checks run off the event loop (server/compute/pool.ts): the real server answers a request while a
// computation holds a compute thread, and stopping the server ends the threads.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { compute, computePoolStats, routeComputeTask } from '../../server/compute/pool'
import { startTestServer, type TestServer } from '../utils/server'

const FIXTURE = new URL('../fixtures/compute/tasks.mjs', import.meta.url).href

let t: TestServer | null = null
beforeAll(async () => {
  t = await startTestServer()
})
afterAll(async () => {
  routeComputeTask('concaveOutline', null)
  await t?.stop()
})

describe('the compute pool in the server', () => {
  it('answers a health request while a long computation runs, before it ends', async () => {
    // The stand-in holds its thread (blocked, as a million-point fit would be) until it is released: no timing.
    routeComputeTask('concaveOutline', { filename: FIXTURE, name: 'hold' })
    const gate = new Int32Array(new SharedArrayBuffer(12))
    const task = compute.concaveOutline(gate as unknown as Float64Array, 1)
    while (Atomics.load(gate, 1) === 0) await new Promise((r) => setTimeout(r, 10))
    const res = await t!.agent().get('/api/health').expect(200)
    expect(res.body.status).toBe('ok')
    // The computation is still running when the answer is in.
    expect(Atomics.load(gate, 2)).toBe(0)
    Atomics.store(gate, 0, 1)
    Atomics.notify(gate, 0)
    expect(await task).toBe('released')
    expect(Atomics.load(gate, 2)).toBe(1)
  })

  it('ends its compute threads when the server stops', async () => {
    expect(computePoolStats().threads).toBeGreaterThan(0)
    await t!.stop()
    t = null
    expect(computePoolStats().threads).toBe(0)
  })
})
