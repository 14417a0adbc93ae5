import type * as Y from 'yjs'
import type { WebsocketProvider } from 'y-websocket'
import { sql } from 'kysely'
import { liveClient } from '../tests/utils/live'
import { startBenchServer } from './lib/benchServer'
import { gcNow } from './lib/gc'
import { percentile } from './lib/stats'

/**
 * Live documents through the real server (DEVELOPERS.md, "Targets": a marker edit seen by 50 other clients, p99
 * under 50 ms on loopback; history: the scene's state at any of 10 k revisions under 100 ms): one writer
 * and 50 readers on one scene, each edit timed from the writer's change to the moment every reader has it;
 * the server's heap per open scene; the timeline query over 10 000 revisions.
 */
export interface LiveBench {
  clients: number
  edits: number
  seenP50: number
  seenP99: number
  seenMax: number
  heapPerSceneKiB: number
  stateAtP50: number
  stateAtP99: number
  revisions: number
}

export async function runLiveBench(log: (l: string) => void = () => {}): Promise<LiveBench> {
  const bench = await startBenchServer()
  const api = bench.api.bind(bench)
  const providers: WebsocketProvider[] = []
  try {
    const db = bench.server.services.db
    const form = new FormData()
    form.append('file', new Blob(['0 0 0\n1 0 0\n0 1 0\n']), 'three.xyz')
    const scan = (await (await fetch(`${bench.url}/api/projects/${bench.projectId}/scans`, { method: 'POST', headers: bench.headers, body: form })).json()).scan
    await db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.id).execute()
    const scene = (await api('POST', `/api/projects/${bench.projectId}/scenes`, { name: 'Live bench' })).scene
    const instanceId = (await api('POST', `/api/scenes/${scene.id}/instances`, { scanId: scan.id })).instance.id

    const connect = () => {
      const c = liveClient(bench.url, bench.headers.cookie!, scene.id)
      providers.push(c.provider)
      return { p: c.provider, markers: c.markers as Y.Map<{ label: string }> }
    }
    const CLIENTS = 50, EDITS = 200
    log(`live: ${CLIENTS} readers and a writer on one scene...`)
    const writer = connect()
    const readers = Array.from({ length: CLIENTS }, connect)
    const until = async (check: () => boolean) => {
      while (!check()) await new Promise((r) => setImmediate(r))
    }
    await until(() => writer.p.synced && readers.every((r) => r.p.synced))
    const id = '6e0c0000-0000-4000-8000-000000000001'
    const seen: number[] = []
    for (let i = 0; i < EDITS; i++) {
      const label = `edit ${i}`
      const t0 = performance.now()
      writer.markers.set(id, { kind: 'distance', label, anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1 + i * 0.001, y: 0, z: 0 }], params: {} } as never)
      await until(() => readers.every((r) => r.markers.get(id)?.label === label))
      seen.push(performance.now() - t0)
      // Paced at half the per-connection cap on changes a second (config.live.writesPerSecond), so arrival
      // jitter never bunches past it.
      await new Promise((r) => setTimeout(r, Math.max(5, 2000 / bench.server.services.config.live.writesPerSecond - (performance.now() - t0))))
    }

    // Heap per open scene: 20 more scenes with 100 markers each, loaded in the server's memory.
    log('live: heap per open scene...')
    gcNow()
    const heap0 = process.memoryUsage().heapUsed
    const SCENES = 20
    for (let k = 0; k < SCENES; k++) {
      const sid = (await api('POST', `/api/projects/${bench.projectId}/scenes`, { name: `Heap ${k}` })).scene.id
      const room = await bench.server.collab.room(sid, 'work')
      room.transact((doc) => {
        const m = doc.getMap('markers')
        for (let j = 0; j < 100; j++) m.set(`m${j}`, { kind: 'distance', label: `marker ${j}`, anchors: [{ instanceId, x: j, y: 0, z: 0 }, { instanceId, x: j + 1, y: 0, z: 0 }], params: {} })
      })
      await room.flushed()
      await bench.server.collab.room(sid, 'record')
    }
    gcNow()
    const heapPerSceneKiB = (process.memoryUsage().heapUsed - heap0) / SCENES / 1024

    // The timeline: 10 000 revisions over 200 markers, then the scene's state at random times.
    log('live: 10 000 revisions for the timeline...')
    const REVISIONS = 10_000
    const start = Date.now() - 3600_000
    const rows = Array.from({ length: REVISIONS }, (_, i) => ({
      marker_id: `00000000-0000-4000-8000-${String(i % 200).padStart(12, '0')}`,
      scene_id: scene.id,
      revision: Math.floor(i / 200) + 1,
      action: 'edited' as const,
      state: JSON.stringify({ kind: 'distance', label: `r${i}`, anchors: [], params: {} }),
      user_id: null,
      created_at: new Date(start + i * 300),
    }))
    for (let i = 0; i < rows.length; i += 1000) await db.insertInto('marker_revisions').values(rows.slice(i, i + 1000)).execute()
    await sql`ANALYZE marker_revisions`.execute(db)
    const stateAt: number[] = []
    for (let i = 0; i < 100; i++) {
      const at = new Date(start + Math.floor(((i * 7919) % 100) / 100 * REVISIONS) * 300).toISOString()
      const t0 = performance.now()
      await api('GET', `/api/scenes/${scene.id}/state?at=${encodeURIComponent(at)}`)
      stateAt.push(performance.now() - t0)
    }
    return {
      clients: CLIENTS,
      edits: EDITS,
      seenP50: percentile(seen, 50),
      seenP99: percentile(seen, 99),
      seenMax: Math.max(...seen),
      heapPerSceneKiB,
      stateAtP50: percentile(stateAt, 50),
      stateAtP99: percentile(stateAt, 99),
      revisions: REVISIONS,
    }
  } finally {
    for (const p of providers) p.destroy()
    await bench.stop()
  }
}

export function formatLiveBench(r: LiveBench): string {
  return [
    `a marker edit seen by all ${r.clients} other clients (${r.edits} edits, writer's change to the last reader's copy): p50 ${r.seenP50.toFixed(1)} ms, p99 ${r.seenP99.toFixed(1)} ms, max ${r.seenMax.toFixed(1)} ms`,
    `server heap per open scene (work and record documents, 100 markers): ${r.heapPerSceneKiB.toFixed(0)} KiB`,
    `the scene's state at a chosen time, ${r.revisions} revisions (GET /api/scenes/:sceneId/state): p50 ${r.stateAtP50.toFixed(1)} ms, p99 ${r.stateAtP99.toFixed(1)} ms`,
  ].join('\n')
}
