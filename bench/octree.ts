/**
 * Bench of the octree, tiles, scan statistics and nearest-point index (DEVELOPERS.md, "Targets": ingest of
 * 10 M points under 6 s and 1 GB, anchor check p99 under 5 ms warm and 50 ms cold).
 *
 * Data: seeded synthetic scans that look like scans: two stations in a 12 x 9 x 3.2 m room with a column,
 * rays on a jittered pan/tilt grid hitting the walls, floor, ceiling and column, 1.5 mm range noise, colour
 * and intensity (so tiles carry 19 bytes a point, as a coloured scan does). Tiles are held in a Map of encoded
 * bytes to stand in for the database; a cold query starts from an empty cache and decodes and indexes every
 * tile it touches, a warm one repeats the same 2000 queries with the cache filled.
 *
 * Run: npx tsx bench/octree.ts [points ...]   (default 1000000 10000000)
 */
import { pathToFileURL } from 'node:url'
import { decodeTile } from '@shared/points/tileFormat'
import { NearestIndex } from '../server/points/index/nearestIndex'
import { buildOctree, hierarchyOf } from '../server/points/octree/buildOctree'
import { encodeNodeTile } from '../server/points/octree/nodeTile'
import { PointBuffer } from '../server/points/pointBuffer'
import { bufferGrid } from '../server/points/stats/bufferGrid'
import { estimatePointUncertainty } from '../server/points/stats/pointUncertainty'
import { estimateSpacing } from '../server/points/stats/spacing'
import { createRandom, gaussian } from '../server/points/stats/random'
import { syntheticScan } from './lib/roomScan'
import { percentile } from './lib/stats'

export interface OctreeBenchRow {
  points: number
  generateMs: number
  gridMs: number
  spacingMs: number
  uncertaintyMs: number
  buildMs: number
  encodeMs: number
  nodes: number
  depth: number
  tileMB: number
  /** Peak RSS after the build and encoding (buffer, tree, all tiles in memory), MB. */
  peakRssBuildMB: number
  coldP50Ms: number
  coldP99Ms: number
  warmP50Ms: number
  warmP99Ms: number
  /** Peak RSS at the end (adds the index's tile cache), MB. */
  peakRssMB: number
  spacing: number
  uncertainty: number
}

const peakRssMB = () => process.resourceUsage().maxRSS / 1024


function time<T>(run: () => T): [T, number] {
  const start = performance.now()
  const result = run()
  return [result, performance.now() - start]
}

async function benchOne(points: number): Promise<OctreeBenchRow> {
  const [buffer, generateMs] = time(() => syntheticScan(points, 7))
  const [grid, gridMs] = time(() => bufferGrid(buffer))
  const [spacing, spacingMs] = time(() => estimateSpacing(buffer, { grid })!)
  const [uncertainty, uncertaintyMs] = time(() => estimatePointUncertainty(buffer, { grid })!)
  const [tree, buildMs] = time(() => buildOctree(buffer))
  const [tiles, encodeMs] = time(() => new Map(tree.nodes.map((node) => [node.key, encodeNodeTile(buffer, node)])))
  let tileBytes = 0
  for (const bytes of tiles.values()) tileBytes += bytes.byteLength
  const peakRssBuildMB = peakRssMB()

  const index = new NearestIndex({ nodes: hierarchyOf(tree), loadTile: async (key) => decodeTile(tiles.get(key)!) })
  const random = createRandom(99)
  const queries: [number, number, number][] = []
  for (let q = 0; q < 2000; q++) {
    // Anchors are placed on the surfaces: a stored point moved by a few millimetres.
    const i = Math.floor(random() * buffer.count)
    queries.push([0, 1, 2].map((a) => buffer.positions[3 * i + a]! + gaussian(random) * 0.005) as [number, number, number])
  }
  const cold: number[] = []
  for (const [x, y, z] of queries) {
    index.clearCache()
    const start = performance.now()
    await index.nearest(x, y, z, 1)
    cold.push(performance.now() - start)
  }
  for (const [x, y, z] of queries) await index.nearest(x, y, z, 1)
  const warm: number[] = []
  for (const [x, y, z] of queries) {
    const start = performance.now()
    await index.nearest(x, y, z, 1)
    warm.push(performance.now() - start)
  }
  return {
    points,
    generateMs,
    gridMs,
    spacingMs,
    uncertaintyMs,
    buildMs,
    encodeMs,
    nodes: tree.nodes.length,
    depth: tree.depth,
    tileMB: tileBytes / 1048576,
    peakRssBuildMB,
    coldP50Ms: percentile(cold, 50),
    coldP99Ms: percentile(cold, 99),
    warmP50Ms: percentile(warm, 50),
    warmP99Ms: percentile(warm, 99),
    peakRssMB: peakRssMB(),
    spacing: spacing,
    uncertainty: uncertainty.value,
  }
}

export async function runOctreeBench(sizes: number[] = [1_000_000, 10_000_000]): Promise<OctreeBenchRow[]> {
  const rows: OctreeBenchRow[] = []
  for (const points of sizes) rows.push(await benchOne(points))
  return rows
}

function format(row: OctreeBenchRow): string {
  const ms = (v: number) => `${v.toFixed(v < 10 ? 2 : 0)} ms`
  return [
    `${(row.points / 1e6).toFixed(1)} M points: octree ${ms(row.buildMs)} (${row.nodes} nodes, depth ${row.depth}), ` +
      `tiles ${ms(row.encodeMs)} (${row.tileMB.toFixed(0)} MB)`,
    `  stats: grid ${ms(row.gridMs)}, spacing ${ms(row.spacingMs)} (${(row.spacing * 1000).toFixed(2)} mm), ` +
      `uncertainty ${ms(row.uncertaintyMs)} (${(row.uncertainty * 1000).toFixed(2)} mm; synthetic range noise 1.5 mm)`,
    `  nearest k=1, 2000 queries: cold p50 ${ms(row.coldP50Ms)} p99 ${ms(row.coldP99Ms)}; warm p50 ${ms(row.warmP50Ms)} p99 ${ms(row.warmP99Ms)}`,
    `  peak RSS ${row.peakRssBuildMB.toFixed(0)} MB after build + tiles, ${row.peakRssMB.toFixed(0)} MB at the end (synthetic data ${ms(row.generateMs)})`,
  ].join('\n')
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const sizes = process.argv.slice(2).map(Number).filter((n) => n > 0)
  const rows = await runOctreeBench(sizes.length ? sizes : undefined)
  for (const row of rows) console.log(format(row))
}
