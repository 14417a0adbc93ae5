// The nearest-point index against brute force (common practice: the index must agree with brute
// force; common practice, no source). Brute force runs over the very points the tiles store (origin + float32
// offset, summed in float64), so distances must agree exactly, not just closely.
import { beforeAll, describe, expect, it } from 'vitest'
import { decodeTile, type DecodedTile } from '@shared/points/tileFormat'
import type { Box3 } from '@shared/points/nodeKey'
import { buildOctree, hierarchyOf, type Octree } from '../../../server/points/octree/buildOctree'
import { encodeNodeTile } from '../../../server/points/octree/nodeTile'
import { NearestIndex, type LoadedTile, type NearestPoint } from '../../../server/points/index/nearestIndex'
import { SharedByteCache } from '../../../server/points/index/tileCache'
import { createRandom, mixedScene } from './factories'

const buffer = mixedScene(25_000, 21, [2_000, -1_500, 120])
const tree: Octree = buildOctree(buffer, { maxLeafPoints: 500, gridResolution: 8 })
const tiles = new Map(tree.nodes.map((node) => [node.key, encodeNodeTile(buffer, node)]))

// The stored points, in world coordinates exactly as the index computes them.
const stored = (() => {
  const xyz: number[] = []
  for (const [, bytes] of tiles) {
    const tile = decodeTile(bytes)
    for (let i = 0; i < tile.count; i++) {
      xyz.push(tile.origin[0] + tile.positions[3 * i]!, tile.origin[1] + tile.positions[3 * i + 1]!, tile.origin[2] + tile.positions[3 * i + 2]!)
    }
  }
  return Float64Array.from(xyz)
})()

function bruteForce(x: number, y: number, z: number, k: number, maxDistance = Infinity): number[] {
  const best: number[] = [] // ascending squared distances, at most k
  const limit = maxDistance * maxDistance
  for (let j = 0; j < stored.length; j += 3) {
    const dx = stored[j]! - x, dy = stored[j + 1]! - y, dz = stored[j + 2]! - z
    const d2 = dx * dx + dy * dy + dz * dz
    if (d2 > limit || (best.length === k && d2 >= best[k - 1]!)) continue
    let at = best.length < k ? best.length : k - 1
    while (at > 0 && best[at - 1]! > d2) {
      if (at < k) best[at] = best[at - 1]!
      at--
    }
    best[at] = d2
  }
  return best.map(Math.sqrt)
}

function queries(count: number, seed: number): [number, number, number][] {
  const random = createRandom(seed)
  const { min, max } = tree.rootBox
  const internal = tree.nodes.filter((node) => node.childMask !== 0)
  const out: [number, number, number][] = []
  for (let q = 0; q < count; q++) {
    const kind = q % 4
    if (kind === 0) {
      out.push([0, 1, 2].map((a) => min[a]! + random() * (max[a]! - min[a]!)) as [number, number, number])
    } else if (kind === 1) {
      // On or a hair beside a mid-plane of a node that has children (a boundary between child boxes).
      const node = internal[Math.floor(random() * internal.length)]!
      const p = [0, 1, 2].map((a) => node.bounds.min[a]! + random() * (node.bounds.max[a]! - node.bounds.min[a]!))
      const axis = Math.floor(random() * 3)
      p[axis] = (node.bounds.min[axis]! + node.bounds.max[axis]!) / 2 + [-1e-9, 0, 1e-9][Math.floor(random() * 3)]!
      out.push(p as [number, number, number])
    } else if (kind === 2) {
      // Outside the bounds, up to 5 m beyond a face.
      const p = [0, 1, 2].map((a) => min[a]! + random() * (max[a]! - min[a]!))
      const axis = Math.floor(random() * 3)
      p[axis] = random() < 0.5 ? min[axis]! - random() * 5 : max[axis]! + random() * 5
      out.push(p as [number, number, number])
    } else {
      // On a stored point, or within a millimetre of one.
      const j = Math.floor(random() * (stored.length / 3)) * 3
      const jitter = random() < 0.5 ? 0 : 0.001
      out.push([stored[j]! + (random() - 0.5) * jitter, stored[j + 1]!, stored[j + 2]! + (random() - 0.5) * jitter])
    }
  }
  return out
}

function loader(delay = false) {
  return async (key: string): Promise<DecodedTile> => {
    if (delay) await new Promise((resolve) => setImmediate(resolve))
    return decodeTile(tiles.get(key)!)
  }
}

function consistent(found: NearestPoint[], x: number, y: number, z: number): boolean {
  return found.every((point, i) => {
    const tile = decodeTile(tiles.get(point.key)!)
    const sx = tile.origin[0] + tile.positions[3 * point.index]!
    const sy = tile.origin[1] + tile.positions[3 * point.index + 1]!
    const sz = tile.origin[2] + tile.positions[3 * point.index + 2]!
    const d = Math.sqrt((point.x - x) ** 2 + (point.y - y) ** 2 + (point.z - z) ** 2)
    return sx === point.x && sy === point.y && sz === point.z && d === point.distance && (i === 0 || found[i - 1]!.distance <= point.distance)
  })
}

describe('NearestIndex against brute force', () => {
  beforeAll(() => {
    expect(tree.depth).toBeGreaterThanOrEqual(4)
  })

  for (const k of [1, 8]) {
    it(`agrees on 10 000 queries with k = ${k}, through a small cache that evicts`, async () => {
      const index = new NearestIndex({ nodes: hierarchyOf(tree), loadTile: loader(), cacheBytes: 256 * 1024 })
      let disagreements = 0
      let inconsistent = 0
      for (const [x, y, z] of queries(10_000, 100 + k)) {
        const found = await index.nearest(x, y, z, k)
        const expected = bruteForce(x, y, z, k)
        if (found.length !== expected.length || found.some((point, i) => point.distance !== expected[i])) disagreements++
        if (!consistent(found, x, y, z)) inconsistent++
      }
      expect(disagreements).toBe(0)
      expect(inconsistent).toBe(0)
      expect(index.cacheStats.evictions).toBeGreaterThan(0)
      expect(index.cacheStats.bytes).toBeLessThanOrEqual(256 * 1024 + 200_000)
    })
  }

  it('shares one byte budget between several indexes: all stay exact, the total stays bounded, the oldest tile of any goes first', async () => {
    const budget = 256 * 1024
    const shared = new SharedByteCache<LoadedTile>(budget)
    const indexes = [0, 1, 2].map((i) => new NearestIndex({ nodes: hierarchyOf(tree), loadTile: loader(), cache: shared.scope(`scan${i}`) }))
    let disagreements = 0
    let peak = 0
    for (const [q, [x, y, z]] of queries(3000, 77).entries()) {
      const found = await indexes[q % 3]!.nearest(x, y, z, 4)
      const expected = bruteForce(x, y, z, 4)
      if (found.length !== expected.length || found.some((point, i) => point.distance !== expected[i])) disagreements++
      peak = Math.max(peak, shared.bytes)
    }
    expect(disagreements).toBe(0)
    // At most one tile (with its grid) over the budget: the newest is kept while a query works on it.
    const largestTile = Math.max(...tree.nodes.map((n) => n.pointCount)) * 40 + 200_000
    expect(peak).toBeLessThanOrEqual(budget + largestTile)
    const stats = indexes.map((index) => index.cacheStats)
    expect(stats.reduce((sum, s) => sum + s.bytes, 0)).toBe(shared.bytes)
    expect(stats.reduce((sum, s) => sum + s.tiles, 0)).toBe(shared.size)
    expect(stats.every((s) => s.evictions > 0)).toBe(true)
    // Dropping one scan's scope frees its tiles only.
    const others = stats[1]!.bytes + stats[2]!.bytes
    shared.drop('scan0')
    expect(shared.bytes).toBe(others)
  })

  it('honours maxDistance (inclusive) and returns fewer points when fewer are that close', async () => {
    const index = new NearestIndex({ nodes: hierarchyOf(tree), loadTile: loader(), cacheBytes: 1 << 20 })
    let disagreements = 0
    let short = 0
    for (const [x, y, z] of queries(1000, 7)) {
      const found = await index.nearest(x, y, z, 8, 0.05)
      const expected = bruteForce(x, y, z, 8, 0.05)
      if (found.length < 8) short++
      if (found.length !== expected.length || found.some((point, i) => point.distance !== expected[i])) disagreements++
    }
    expect(disagreements).toBe(0)
    expect(short).toBeGreaterThan(100)
    const exact = await index.nearest(stored[0]!, stored[1]!, stored[2]!, 1, 0)
    expect(exact).toHaveLength(1)
    expect(exact[0]!.distance).toBe(0)
  })

  it('shares loads between concurrent queries and still agrees', async () => {
    let loads = 0
    const slow = loader(true)
    const index = new NearestIndex({ nodes: hierarchyOf(tree), loadTile: (key) => { loads++; return slow(key) } })
    const batch = queries(400, 55)
    const results = await Promise.all(batch.map(([x, y, z]) => index.nearest(x, y, z, 8)))
    results.forEach((found, q) => {
      const [x, y, z] = batch[q]!
      expect(found.map((point) => point.distance)).toEqual(bruteForce(x, y, z, 8))
    })
    expect(loads).toBeLessThanOrEqual(tree.nodes.length)
  })

  it('finds every point within a sphere and in a box', async () => {
    const index = new NearestIndex({ nodes: hierarchyOf(tree), loadTile: loader(), cacheBytes: 512 * 1024 })
    for (const [x, y, z] of queries(200, 9)) {
      const within = await index.pointsWithin(x, y, z, 0.2)
      expect(within.map((point) => point.distance)).toEqual(bruteForce(x, y, z, stored.length, 0.2))
    }
    const random = createRandom(4)
    for (let b = 0; b < 50; b++) {
      const [x, y, z] = queries(1, 300 + b)[0]!
      const half = [random(), random() * 0.3, random() * 2]
      const box: Box3 = { min: [x - half[0]!, y - half[1]!, z - half[2]!], max: [x + half[0]!, y + half[1]!, z + half[2]!] }
      let expected = 0
      for (let j = 0; j < stored.length; j += 3) {
        if ([0, 1, 2].every((a) => stored[j + a]! >= box.min[a]! && stored[j + a]! <= box.max[a]!)) expected++
      }
      let inside = 0
      const count = await index.forEachPointInBox(box, (px, py, pz) => {
        if (px >= box.min[0] && px <= box.max[0] && py >= box.min[1] && py <= box.max[1] && pz >= box.min[2] && pz <= box.max[2]) inside++
      })
      expect(count).toBe(expected)
      expect(inside).toBe(expected)
    }
  })

  it('rejects a broken hierarchy, a tile that does not match it, and retries after a failed load', async () => {
    const nodes = hierarchyOf(tree)
    expect(() => new NearestIndex({ nodes: nodes.filter((node) => node.key !== 'r0'), loadTile: loader() })).toThrow(/no parent/)
    expect(() => new NearestIndex({ nodes: nodes.filter((node) => node.key !== 'r'), loadTile: loader() })).toThrow(/no parent|no root/)
    const wrongCount = nodes.map((node) => (node.key === 'r' ? { ...node, pointCount: node.pointCount + 1 } : node))
    await expect(new NearestIndex({ nodes: wrongCount, loadTile: loader() }).nearest(0, 0, 0)).rejects.toThrow(/hierarchy says/)
    let fail = true
    const flaky = new NearestIndex({
      nodes,
      loadTile: async (key) => {
        if (fail) throw new Error('database unavailable')
        return decodeTile(tiles.get(key)!)
      },
    })
    await expect(flaky.nearest(2000, -1500, 120)).rejects.toThrow('database unavailable')
    fail = false
    const [x, y, z] = [2003, -1497, 121]
    expect((await flaky.nearest(x, y, z, 3)).map((point) => point.distance)).toEqual(bruteForce(x, y, z, 3))
    expect(await new NearestIndex({ nodes: [], loadTile: loader() }).nearest(0, 0, 0, 5)).toEqual([])
    await expect(flaky.nearest(NaN, 0, 0)).rejects.toThrow(RangeError)
  })
})
