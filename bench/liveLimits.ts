import WebSocket from 'ws'
import * as encoding from 'lib0/encoding'
import { startBenchServer } from './lib/benchServer'
import { gcNow } from './lib/gc'

/**
 * The live connection caps (server/collab/limits.ts) against clients that misbehave on purpose: the server's
 * heap and RSS before each client, at its peak while it misbehaves, and after it was closed (after a full
 * collection). The caps are the production ones (PRODUCTION_LIVE_LIMITS): a client that never reads is cut
 * off once its unsent data has stayed over 8 MiB for 10 s.
 */
export interface LiveLimitsRow {
  client: string
  closedWith: string
  heapBeforeMiB: number
  heapPeakMiB: number
  heapAfterMiB: number
  rssBeforeMiB: number
  rssPeakMiB: number
  rssAfterMiB: number
}

const MiB = 1024 * 1024
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

function syncMessage(subType: 0 | 2, payload: Uint8Array): Uint8Array {
  const e = encoding.createEncoder()
  encoding.writeVarUint(e, 0)
  encoding.writeVarUint(e, subType)
  encoding.writeVarUint8Array(e, payload)
  return encoding.toUint8Array(e)
}

export async function runLiveLimitsBench(log: (l: string) => void = () => {}): Promise<LiveLimitsRow[]> {
  const bench = await startBenchServer()
  try {
    const scene = (await bench.api('POST', `/api/projects/${bench.projectId}/scenes`, { name: 'Caps bench' })).scene
    const room = await bench.server.collab.room(scene.id, 'work')
    room.transact((doc) => doc.getMap('bulk').set('x', 'b'.repeat(600_000)))
    await room.flushed()
    const rows: LiveLimitsRow[] = []
    const measure = async (client: string, path: string, misbehave: (ws: WebSocket) => Promise<void>) => {
      log(`live caps: ${client}...`)
      gcNow()
      const before = process.memoryUsage()
      let heapPeak = before.heapUsed, rssPeak = before.rss
      const sampler = setInterval(() => {
        const m = process.memoryUsage()
        heapPeak = Math.max(heapPeak, m.heapUsed)
        rssPeak = Math.max(rssPeak, m.rss)
      }, 20)
      const ws = new WebSocket(`${bench.url.replace(/^http/, 'ws')}/collab/${path}`, { headers: { origin: bench.url, cookie: bench.headers.cookie! } })
      const closed = new Promise<string>((resolve) => ws.on('close', (code, reason) => resolve(`${code} ${String(reason)}`)))
      await new Promise((r) => ws.once('open', r))
      await misbehave(ws)
      const closedWith = await Promise.race([closed, sleep(5_000).then(() => 'not closed')])
      ws.terminate()
      clearInterval(sampler)
      await sleep(100)
      gcNow()
      const after = process.memoryUsage()
      rows.push({ client, closedWith, heapBeforeMiB: before.heapUsed / MiB, heapPeakMiB: heapPeak / MiB, heapAfterMiB: after.heapUsed / MiB, rssBeforeMiB: before.rss / MiB, rssPeakMiB: rssPeak / MiB, rssAfterMiB: after.rss / MiB })
    }
    const admitted = (ws: WebSocket) => new Promise((r) => ws.once('message', r))
    await measure('1000 messages of 64 KiB before sign-in is checked', scene.id, async (ws) => {
      for (let i = 0; i < 1000 && ws.readyState === ws.OPEN; i++) ws.send(syncMessage(0, new Uint8Array(64 * 1024)))
    })
    await measure('1000 sync requests at once', scene.id, async (ws) => {
      await admitted(ws)
      for (let i = 0; i < 1000 && ws.readyState === ws.OPEN; i++) ws.send(syncMessage(0, new Uint8Array([0])))
    })
    await measure('a client that never reads (8 full-state requests a second)', scene.id, async (ws) => {
      await admitted(ws)
      const socket = (ws as unknown as { _socket: { pause(): void; resume(): void } })._socket
      socket.pause()
      // Long enough for the backlog to pass 8 MiB and stay there for the 10 s the cap allows.
      const until = Date.now() + 30_000
      // The room as it is now (an idle one may have been unloaded and loaded again between clients).
      const live = await bench.server.collab.room(scene.id, 'work')
      while (Date.now() < until && [...live.connections.keys()].every((s) => s.readyState === s.OPEN)) {
        ws.send(syncMessage(0, new Uint8Array([0])))
        await sleep(125)
      }
      socket.resume()
    })
    await measure('a read-only client sending 4 MiB', `${scene.id}/record`, async (ws) => {
      await admitted(ws)
      ws.send(syncMessage(0, new Uint8Array(4 * MiB)))
    })
    await measure('a writer sending 5000 updates at once', scene.id, async (ws) => {
      await admitted(ws)
      for (let i = 0; i < 5000 && ws.readyState === ws.OPEN; i++) ws.send(syncMessage(2, new Uint8Array([0, 0])))
    })
    return rows
  } finally {
    await bench.stop()
  }
}

export function formatLiveLimitsBench(rows: LiveLimitsRow[]): string {
  const f = (n: number) => n.toFixed(0)
  return [
    ...rows.map((x) => `${x.client}: closed ${x.closedWith}; heap ${f(x.heapBeforeMiB)} -> peak ${f(x.heapPeakMiB)} -> ${f(x.heapAfterMiB)} MiB, RSS ${f(x.rssBeforeMiB)} -> peak ${f(x.rssPeakMiB)} -> ${f(x.rssAfterMiB)} MiB`),
  ].join('\n')
}
