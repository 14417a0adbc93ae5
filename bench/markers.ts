import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { boxSolid, wallWithOpening } from '../tests/utils/solids'
import { startBenchServer } from './lib/benchServer'
import { percentile } from './lib/stats'
import { writeSyntheticPly } from './lib/syntheticScans'

/**
 * Marker checks through the real server (DEVELOPERS.md, "Targets": anchor check p99 under 5 ms warm and 50 ms
 * cold on a 10 M-point scan): the anchor snap alone (nearest stored point through the scan's index, tiles
 * from PostgreSQL; cold = every tile cache dropped before each query), a whole distance marker through the
 * API (POST to answer: validation, row, snap of both anchors, check stored), a section across the 10 M-point
 * room (slab, outline, and its free opening), and a clearance of a 1 M-point object through a scanned door.
 */
export interface MarkerBench {
  points: number
  snapWarm: [number, number]
  snapCold: [number, number]
  /** Tiles read from PostgreSQL per cold snap, p50 and p99. */
  coldTilesRead: [number, number]
  /** The scan's first query on this server: its hierarchy read and index built. */
  firstQueryMs: number
  postWarm: [number, number]
  sectionColdMs: number
  sectionWarmMs: number
  sectionPoints: number
  openingWidth: number | null
  sectionNote: string
  clearanceMs: number
  objectPoints: number
  outcome: string
  serverRssMiB: number
}

async function timed<T>(run: () => Promise<T>): Promise<[T, number]> {
  const t0 = performance.now()
  const value = await run()
  return [value, performance.now() - t0]
}

export async function runMarkerBench(points: number, log: (l: string) => void = () => {}): Promise<MarkerBench> {
  const bench = await startBenchServer()
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'spanmark-marker-bench-'))
  const api = bench.api.bind(bench)
  const worker = await bench.startWorker()
  try {
    const roomFile = path.join(folder, 'room.ply')
    writeSyntheticPly(roomFile, points)
    log(`markers: ingesting the ${points / 1e6} M-point room...`)
    const room = await bench.ingest(roomFile)
    // A 1 M-point box (1.0 x 0.6 x 0.8 m; 3.76 m2 of surface at 1.94 mm) and a wall with a 1.4 x 2.1 m door.
    const boxFile = path.join(folder, 'box.ply')
    fs.writeFileSync(boxFile, boxSolid(1.0, 0.6, 0.8, 0.00194).ply())
    const wallFile = path.join(folder, 'wall.ply')
    fs.writeFileSync(wallFile, wallWithOpening({ width: 1.4, height: 2.1 }).ply())
    log('markers: ingesting the object and the door...')
    const box = await bench.ingest(boxFile)
    const wall = await bench.ingest(wallFile)
    const scene = (await api('POST', `/api/projects/${bench.projectId}/scenes`, { name: 'Bench' })).scene
    const place = async (scanId: string, t: [number, number, number]) =>
      (await api('POST', `/api/scenes/${scene.id}/instances`, { scanId, matrix: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, ...t, 1] })).instance.id as string
    const roomPlacement = await place(room.scanId, [0, 0, 0])
    const boxPlacement = await place(box.scanId, [20, -2, 0])
    const wallPlacement = await place(wall.scanId, [20, 0, 0])

    // Query points: stored points of the room, nudged by up to 5 mm (an anchor a person placed).
    const indexes = bench.server.services.scanIndexes
    const queries: [number, number, number][] = []
    for (let i = 0; i < 400; i++) {
      const wallPick = [[(i * 0.029) % 12, 0.002, 0.3 + ((i * 0.013) % 2.6)], [12 - 0.003, (i * 0.021) % 9, 0.2 + ((i * 0.007) % 2.8)], [(i * 0.031) % 12, (i * 0.017) % 9, 0.004]][i % 3]!
      queries.push(wallPick as [number, number, number])
    }
    const snapCold: number[] = [], snapWarm: number[] = [], coldTiles: number[] = []
    const registry = indexes as unknown as { cacheStats(id: string): Promise<{ misses: number }> }
    // The scan's hierarchy is read once per server (its first query); cold here means no tile cached.
    const [, firstMs] = await timed(() => indexes.snap(room.scanId, ...queries[0]!))
    for (const q of queries.slice(0, 200)) {
      await indexes.clearCaches()
      const before = (await registry.cacheStats(room.scanId)).misses
      snapCold.push((await timed(() => indexes.snap(room.scanId, ...q)))[1])
      coldTiles.push((await registry.cacheStats(room.scanId)).misses - before)
    }
    const tilesRead: [number, number] = [percentile(coldTiles, 50), percentile(coldTiles, 99)]
    for (const q of queries) await indexes.snap(room.scanId, ...q)
    for (const q of queries) snapWarm.push((await timed(() => indexes.snap(room.scanId, ...q)))[1])
    const postWarm: number[] = []
    for (const q of queries.slice(0, 200)) {
      const b: [number, number, number] = [q[0], q[1], q[2] + 0.2]
      postWarm.push((await timed(() => api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'distance', anchors: [{ instanceId: roomPlacement, x: q[0], y: q[1], z: q[2] }, { instanceId: roomPlacement, x: b[0], y: b[1], z: b[2] }] })))[1])
    }

    // A vertical section across the room at x = 6 m, 20 cm thick, with its free opening (the room's cross-section).
    const sectionBody = { kind: 'section', anchors: [], params: { plane: 'numbers', origin: [6, 4.5, 1.6], normal: [1, 0, 0], thickness: 0.2, opening: true, instanceIds: [roomPlacement] } }
    await indexes.clearCaches()
    log('markers: a section across the room...')
    const [cold, sectionColdMs] = await timed(() => api('POST', `/api/scenes/${scene.id}/markers`, sectionBody))
    const [, sectionWarmMs] = await timed(() => api('POST', `/api/scenes/${scene.id}/markers`, sectionBody))

    const door = (await api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'section', anchors: [{ instanceId: wallPlacement, x: 19.3, y: 0, z: 1 }, { instanceId: wallPlacement, x: 20.7, y: 0, z: 1 }], params: { plane: 'two-points', thickness: 0.1, opening: true } })).marker
    log('markers: a clearance of the 1 M-point object...')
    const [clear, clearanceMs] = await timed(() => api('POST', `/api/scenes/${scene.id}/markers`, { kind: 'clearance', params: { objectInstanceId: boxPlacement, sectionMarkerId: door.id } }))
    const rss = Number(/VmRSS:\s+(\d+)/.exec(fs.readFileSync('/proc/self/status', 'utf8'))?.[1] ?? 0) / 1024
    return {
      points,
      snapWarm: [percentile(snapWarm, 50), percentile(snapWarm, 99)],
      snapCold: [percentile(snapCold, 50), percentile(snapCold, 99)],
      coldTilesRead: tilesRead,
      firstQueryMs: firstMs,
      postWarm: [percentile(postWarm, 50), percentile(postWarm, 99)],
      sectionColdMs,
      sectionWarmMs,
      sectionPoints: cold.marker.check.section?.pointCount ?? 0,
      openingWidth: cold.marker.check.section?.opening?.clearWidth ?? null,
      sectionNote: cold.marker.check.reason ?? '',
      clearanceMs,
      objectPoints: clear.marker.check.clearance?.objectPointCount ?? 0,
      outcome: `${clear.marker.check.state} / ${clear.marker.check.clearance?.outcome}, margin ${clear.marker.check.value?.toFixed(3)} m`,
      serverRssMiB: rss,
    }
  } finally {
    worker.kill('SIGTERM')
    await new Promise((r) => worker.once('exit', r))
    await bench.stop()
    fs.rmSync(folder, { recursive: true, force: true })
  }
}

export function formatMarkerBench(r: MarkerBench): string {
  const ms = (x: number) => `${x.toFixed(2)} ms`
  return [
    `scan: ${r.points / 1e6} M points (tiles in PostgreSQL)`,
    `anchor snap, nearest stored point: warm p50 ${ms(r.snapWarm[0])} p99 ${ms(r.snapWarm[1])}; cold (every tile cache dropped) p50 ${ms(r.snapCold[0])} p99 ${ms(r.snapCold[1])}, reading ${r.coldTilesRead[0]} tiles at p50 and ${r.coldTilesRead[1]} at p99; the scan's first query (hierarchy read) ${ms(r.firstQueryMs)}`,
    `distance marker through the API (POST to answer, two anchors checked, stored): p50 ${ms(r.postWarm[0])} p99 ${ms(r.postWarm[1])}`,
    `section across the room, 20 cm slab, ${r.sectionPoints} points, free opening ${r.openingWidth?.toFixed(3) ?? `none (${r.sectionNote})`} m wide: cold ${r.sectionColdMs.toFixed(0)} ms, warm ${r.sectionWarmMs.toFixed(0)} ms`,
    `clearance of a ${(r.objectPoints / 1e6).toFixed(2)} M-point object through a scanned door: ${r.clearanceMs.toFixed(0)} ms (${r.outcome})`,
    `server RSS after: ${r.serverRssMiB.toFixed(0)} MiB`,
  ].join('\n')
}
