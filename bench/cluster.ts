import { isDeepStrictEqual } from 'node:util'
import pino from 'pino'
import type * as Y from 'yjs'
import type { WebsocketProvider } from 'y-websocket'
import { WORK_MAPS } from '@shared/collab/documents'
import { Room } from '../server/collab/room'
import { createDb, createPool } from '../server/db'
import { writeBinaryPly } from '../server/points/writers/plyWriter'
import { liveClient } from '../tests/utils/live'
import { spawnServer, type ServerProcess } from '../tests/utils/processes'
import { percentile } from './lib/stats'

/**
 * Two server processes on one PostgreSQL (each an operating-system process of its own; the clients run in
 * the bench's process). Live: `clients` clients over `scenes` scenes, half of each scene's clients on each
 * process, every client changing its own marker every `editEveryMs` for `seconds`; each edit carries its
 * send time, and every client on the *other* process records when it sees it (edits seen across processes).
 * At the end every scene's clients and its stored document (read back from PostgreSQL) must agree. REST: a
 * steady mix of tile reads, nearest-point searches and marker lists from `restLoops` loops per process for
 * `restSeconds`, with each process's throughput.
 */
export interface ClusterBenchOptions {
  clients: number
  scenes: number
  seconds: number
  editEveryMs: number
  restSeconds: number
  restLoops: number
}

export const DEFAULT_CLUSTER_BENCH: ClusterBenchOptions = { clients: 200, scenes: 10, seconds: 60, editEveryMs: 2000, restSeconds: 20, restLoops: 8 }

export interface ClusterBench {
  options: ClusterBenchOptions
  edits: number
  /** Sightings of an older edit after a newer one (an entry put back). */
  stale: number
  seen: number
  seenP50: number
  seenP99: number
  seenMax: number
  /** Scenes whose clients and stored document agree at the end. */
  converged: number
  settleMs: number
  rest: { url: string; requests: number; perSecond: number; p50: number; p99: number; errors: number }[]
}

export function clusterOptions(argv: string[]): ClusterBenchOptions {
  const num = (name: string, fallback: number) => {
    const at = argv.indexOf(`--${name}`)
    const v = at >= 0 ? Number(argv[at + 1]) : fallback
    if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name} must be a positive number, not ${argv[at + 1]}`)
    return v
  }
  const d = DEFAULT_CLUSTER_BENCH
  return {
    clients: num('cluster-clients', d.clients),
    scenes: num('cluster-scenes', d.scenes),
    seconds: num('cluster-seconds', d.seconds),
    editEveryMs: num('cluster-edit-ms', d.editEveryMs),
    restSeconds: num('cluster-rest-seconds', d.restSeconds),
    restLoops: num('cluster-rest-loops', d.restLoops),
  }
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

export async function runClusterBench(options: ClusterBenchOptions = DEFAULT_CLUSTER_BENCH, log: (l: string) => void = () => {}): Promise<ClusterBench> {
  const databaseUrl = process.env.BENCH_DATABASE_URL
  if (!databaseUrl) throw new Error('the benches need BENCH_DATABASE_URL: run them through `npm run bench`')
  const processes: ServerProcess[] = []
  const providers: WebsocketProvider[] = []
  const pool = createPool(databaseUrl)
  const db = createDb(pool)
  try {
    log('cluster: starting two server processes...')
    // The first one migrates; the second starts once it has (two migrators at once would wait on each other).
    processes.push(await spawnServer(databaseUrl, { WORKER: 'spawn', WORKERS: '1' }))
    processes.push(await spawnServer(databaseUrl))
    const [p1, p2] = processes as [ServerProcess, ServerProcess]
    const json = (url: string) => ({ 'content-type': 'application/json', Origin: url })
    const email = `cluster-${Date.now()}@spanmark.example`
    await fetch(`${p1.url}/api/auth/sign-up`, { method: 'POST', headers: json(p1.url), body: JSON.stringify({ email, password: 'bench password 1', name: 'Cluster bench' }) })
    const cookieOf = async (url: string) => {
      const res = await fetch(`${url}/api/auth/sign-in`, { method: 'POST', headers: json(url), body: JSON.stringify({ email, password: 'bench password 1' }) })
      if (!res.ok) throw new Error(`sign-in on ${url}: ${res.status} ${await res.text()}`)
      return res.headers.get('set-cookie')!.split(';')[0]!
    }
    const cookies = [await cookieOf(p1.url), await cookieOf(p2.url)]
    const api = async (i: number, method: string, path: string, body?: unknown) => {
      const url = processes[i]!.url
      const res = await fetch(`${url}${path}`, { method, headers: { ...json(url), cookie: cookies[i]! }, body: body === undefined ? undefined : JSON.stringify(body) })
      if (!res.ok) throw new Error(`${method} ${path}: ${res.status} ${await res.text()}`)
      return res.json()
    }
    const projectId = (await api(0, 'POST', '/api/projects', { name: 'Cluster bench' })).project.id as string
    // A floor of 200 x 200 points, 1 cm apart, processed by the first process's worker.
    const side = 200
    const positions = new Float64Array(3 * side * side)
    for (let i = 0; i < side * side; i++) {
      positions[3 * i] = (i % side) * 0.01
      positions[3 * i + 1] = Math.floor(i / side) * 0.01
    }
    const form = new FormData()
    form.append('file', new Blob([new Uint8Array(writeBinaryPly({ count: side * side, positions }))]), 'floor.ply')
    const uploaded = await fetch(`${p1.url}/api/projects/${projectId}/scans`, { method: 'POST', headers: { Origin: p1.url, cookie: cookies[0]! }, body: form })
    if (uploaded.status !== 202) throw new Error(`upload: ${uploaded.status} ${await uploaded.text()}`)
    const scanId = ((await uploaded.json()) as { scan: { id: string } }).scan.id
    for (;;) {
      const { scan } = await api(0, 'GET', `/api/scans/${scanId}`)
      if (scan.status === 'ready') break
      if (scan.status === 'failed') throw new Error(`the bench scan failed: ${scan.error}`)
      await sleep(200)
    }
    const tiles = ((await db.selectFrom('scan_tiles').select('node_key').where('scan_id', '=', scanId).execute()) as { node_key: string }[]).map((t) => t.node_key)

    const sceneIds: string[] = []
    const instanceIds: string[] = []
    for (let s = 0; s < options.scenes; s++) {
      const sceneId = (await api(s % 2, 'POST', `/api/projects/${projectId}/scenes`, { name: `Cluster ${s}` })).scene.id as string
      sceneIds.push(sceneId)
      instanceIds.push((await api(s % 2, 'POST', `/api/scenes/${sceneId}/instances`, { scanId })).instance.id)
    }

    // Live: clients spread over scenes, alternating processes.
    log(`cluster: ${options.clients} live clients over ${options.scenes} scenes and two processes...`)
    type Client = { side: number; scene: number; index: number; doc: Y.Doc; markers: Y.Map<{ label: string }>; provider: WebsocketProvider }
    const clients: Client[] = []
    const seen: number[] = []
    let stale = 0
    // y-websocket's provider adds a process 'exit' listener each in Node.
    process.setMaxListeners(options.clients + 20)
    for (let c = 0; c < options.clients; c++) {
      const side = c % 2
      const scene = Math.floor(c / 2) % options.scenes
      const lc = liveClient(processes[side]!.url, cookies[side]!, sceneIds[scene]!)
      providers.push(lc.provider)
      const client: Client = { side, scene, index: c, doc: lc.doc, markers: lc.markers as Y.Map<{ label: string }>, provider: lc.provider }
      // Labels are `c<sender>@<side> <sent at>`: a client on the other process records the time to see each
      // new edit once; an older label coming back (the server putting an entry back) is counted apart.
      const newest = new Map<string, number>()
      client.markers.observe((event) => {
        const now = performance.now()
        for (const key of event.keysChanged) {
          const label = client.markers.get(key)?.label ?? ''
          const m = /^c(\d+)@(\d) ([\d.]+)$/.exec(label)
          if (!m || Number(m[2]) === side) continue
          const sent = Number(m[3])
          if (sent > (newest.get(key) ?? -1)) {
            newest.set(key, sent)
            seen.push(now - sent)
          } else if (sent < newest.get(key)!) stale++
        }
      })
      clients.push(client)
    }
    while (!clients.every((c) => c.provider.synced)) await sleep(50)
    const markerIdOf = (c: number) => `7c1a0000-0000-4000-8000-${String(c).padStart(12, '0')}`
    let edits = 0
    const end = performance.now() + options.seconds * 1000
    // Each client edits on its own clock, spread over the period so the load is steady.
    await Promise.all(
      clients.map(async (client) => {
        await sleep((client.index / clients.length) * options.editEveryMs)
        let i = 0
        while (performance.now() < end) {
          const x = (i++ % 100) * 0.01
          client.markers.set(markerIdOf(client.index), { kind: 'distance', label: `c${client.index}@${client.side} ${performance.now().toFixed(3)}`, anchors: [{ instanceId: instanceIds[client.scene]!, x, y: 0, z: 0 }, { instanceId: instanceIds[client.scene]!, x: x + 0.5, y: 0.5, z: 0 }], params: {} } as never)
          edits++
          await sleep(options.editEveryMs)
        }
      }),
    )
    log(`cluster: ${edits} edits sent; waiting for every scene to settle...`)
    const settleStart = performance.now()
    const agree = async (s: number) => {
      const mine = clients.filter((c) => c.scene === s)
      const first = mine[0]!.markers.toJSON()
      if (!mine.every((c) => isDeepStrictEqual(c.markers.toJSON(), first))) return false
      const stored = (await Room.load(db, sceneIds[s]!, 'work', pino({ level: 'silent' }))).doc.getMap(WORK_MAPS.markers).toJSON()
      return isDeepStrictEqual(stored, first)
    }
    let converged = 0
    const settleBy = performance.now() + 30_000
    for (;;) {
      converged = 0
      for (let s = 0; s < options.scenes; s++) if (await agree(s)) converged++
      if (converged === options.scenes || performance.now() > settleBy) break
      await sleep(250)
    }
    const settleMs = performance.now() - settleStart
    for (const p of providers) p.destroy()
    providers.length = 0

    // REST: a steady mix against both processes at once.
    log(`cluster: REST mix, ${options.restLoops} loops per process for ${options.restSeconds} s...`)
    const rest = await Promise.all(
      processes.map(async (proc, i) => {
        const times: number[] = []
        let errors = 0
        const stopAt = performance.now() + options.restSeconds * 1000
        await Promise.all(
          Array.from({ length: options.restLoops }, async (_, loop) => {
            let n = loop
            while (performance.now() < stopAt) {
              const kind = n++ % 3
              const path =
                kind === 0
                  ? `/api/scans/${scanId}/tiles/${tiles[n % tiles.length]}`
                  : kind === 1
                    ? `/api/scans/${scanId}/nearest?x=${((n * 37) % 200) * 0.01}&y=${((n * 53) % 200) * 0.01}&z=0.001&k=8`
                    : `/api/scenes/${sceneIds[n % sceneIds.length]}/markers`
              const t0 = performance.now()
              const res = await fetch(`${proc.url}${path}`, { headers: { Origin: proc.url, cookie: cookies[i]! } })
              await res.arrayBuffer()
              if (!res.ok) errors++
              times.push(performance.now() - t0)
            }
          }),
        )
        return { url: proc.url, requests: times.length, perSecond: times.length / options.restSeconds, p50: percentile(times, 50), p99: percentile(times, 99), errors }
      }),
    )
    return { options, edits, stale, seen: seen.length, seenP50: percentile(seen, 50), seenP99: percentile(seen, 99), seenMax: Math.max(0, ...seen), converged, settleMs, rest }
  } finally {
    for (const p of providers) p.destroy()
    for (const p of processes) await p.stop()
    await db.destroy()
  }
}

export function formatClusterBench(r: ClusterBench): string {
  const o = r.options
  return [
    `${o.clients} live clients over ${o.scenes} scenes, half on each of two server processes, each changing its marker every ${o.editEveryMs} ms for ${o.seconds} s: ${r.edits} edits`,
    `an edit seen by a client on the other process (${r.seen} sightings, sender's change to the receiver's copy; ${r.stale} older edits seen again): p50 ${r.seenP50.toFixed(1)} ms, p99 ${r.seenP99.toFixed(1)} ms, max ${r.seenMax.toFixed(1)} ms`,
    `documents converged with the database at the end: ${r.converged} of ${o.scenes} (settled ${r.settleMs.toFixed(0)} ms after the last edit)`,
    ...r.rest.map((p, i) => `REST mix (tiles, nearest k=8, marker lists) on process ${i + 1}, ${o.restLoops} loops for ${o.restSeconds} s: ${p.perSecond.toFixed(0)} requests/s, p50 ${p.p50.toFixed(1)} ms, p99 ${p.p99.toFixed(1)} ms, ${p.errors} errors`),
    `REST mix, both processes together: ${r.rest.reduce((s, p) => s + p.perSecond, 0).toFixed(0)} requests/s`,
  ].join('\n')
}
