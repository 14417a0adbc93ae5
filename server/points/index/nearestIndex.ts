import { isNodeKey, parentKey, type Box3, type NodeInfo } from '@shared/points/nodeKey'
import { positionRoundingBound, type DecodedTile } from '@shared/points/tileFormat'
import { KBest } from './kBest'
import { ByteLruCache, type TileCache } from './tileCache'
import { UniformGrid } from './uniformGrid'

/**
 * Nearest stored points over a scan's octree (octree after Meagher 1982; octree search, agreeing with brute
 * force), reading tiles through a caller-supplied loader (the database in production, a Map in the bench).
 *
 * Search: best-first over the nodes by the distance from the query to each node's box. Every node stores
 * points (ancestors hold the subsamples), so every node at every level whose box is within the current k-th
 * best distance is searched, and the search stops when the nearest unsearched box is farther. A child's box
 * lies inside its parent's, so children are queued only once their parent has been reached.
 *
 * Exactness: a point is origin (float64) + offset (float32 widened exactly to float64), summed once in
 * float64 (rounding at most half an ulp of the coordinate, about 1e-9 m at 10 km), and distances are
 * computed in float64 from those coordinates: the same numbers a brute-force search over the decoded tiles
 * gets. The stored coordinate itself differs from the uploaded one by the tile's float32 rounding
 * (positionRoundingBound: about 1.9 um at a 100 m node). Node boxes are widened by that rounding bound
 * before pruning, since a rounded point may sit just outside its node's box.
 *
 * Each tile gets a UniformGrid when it enters the cache (built once, O(n)); the cache is an LRU bounded in
 * bytes (tile arrays + grid).
 */

export interface NearestIndexOptions {
  nodes: readonly NodeInfo[]
  loadTile: (key: string) => Promise<DecodedTile>
  /** Several tiles at once (one database round trip); optional, `loadTile` is used one by one without it. */
  loadTiles?: (keys: string[]) => Promise<Map<string, DecodedTile>>
  /** Byte budget of the index's own tile cache (default 256 MiB); ignored when `cache` is given. */
  cacheBytes?: number
  /** A cache to use instead of one of its own: a scope of a budget shared with other indexes (SharedByteCache). */
  cache?: TileCache<LoadedTile>
}

export interface NearestPoint {
  x: number
  y: number
  z: number
  distance: number
  /** The tile (node key) and the point's index in it. */
  key: string
  index: number
}

export interface LoadedTile {
  key: string
  tile: DecodedTile
  grid: UniformGrid
}

export type BoxVisitor = (x: number, y: number, z: number, tile: LoadedTile, index: number) => void

export const DEFAULT_CACHE_BYTES = 256 * 1024 * 1024

/**
 * Whole-scan and slab walks give the event loop a turn after about this many points: with every tile
 * cached a walk has no other await, and a million points would hold the server for a quarter second.
 */
const YIELD_POINTS = 65_536
const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve))

const GRID_OPTIONS = { pointsPerCell: 2, maxCells: 1 << 18 }

export class NearestIndex {
  private readonly keys: string[]
  private readonly counts: number[]
  /** Node boxes widened by their float32 rounding bound: min x y z, max x y z per node. */
  private readonly boxes: Float64Array
  private readonly children: number[][]
  private readonly root: number
  private readonly loadTile: (key: string) => Promise<DecodedTile>
  private readonly loadTiles: ((keys: string[]) => Promise<Map<string, DecodedTile>>) | null
  private readonly cache: TileCache<LoadedTile>
  private readonly inflight = new Map<number, Promise<LoadedTile>>()

  constructor(options: NearestIndexOptions) {
    const nodes = options.nodes
    this.loadTile = options.loadTile
    this.loadTiles = options.loadTiles ?? null
    this.cache = options.cache ?? new ByteLruCache(options.cacheBytes ?? DEFAULT_CACHE_BYTES)
    this.keys = nodes.map((node) => node.key)
    this.counts = nodes.map((node) => node.pointCount)
    this.boxes = new Float64Array(nodes.length * 6)
    this.children = nodes.map(() => [])
    const ids = new Map<string, number>()
    nodes.forEach((node, id) => {
      if (!isNodeKey(node.key)) throw new RangeError(`'${node.key}' is not a node key`)
      if (ids.has(node.key)) throw new RangeError(`node ${node.key} appears twice`)
      ids.set(node.key, id)
      const b = node.bounds
      const edge = Math.max(b.max[0] - b.min[0], b.max[1] - b.min[1], b.max[2] - b.min[2])
      const magnitude = Math.max(...b.min.map(Math.abs), ...b.max.map(Math.abs))
      const pad = positionRoundingBound(edge) * 1.01 + 16 * Number.EPSILON * magnitude
      for (let axis = 0; axis < 3; axis++) {
        this.boxes[id * 6 + axis] = b.min[axis]! - pad
        this.boxes[id * 6 + 3 + axis] = b.max[axis]! + pad
      }
    })
    let root = -1
    nodes.forEach((node, id) => {
      const parent = parentKey(node.key)
      if (parent === null) {
        root = id
        return
      }
      const parentId = ids.get(parent)
      if (parentId === undefined) throw new RangeError(`node ${node.key} has no parent ${parent} in the hierarchy`)
      this.children[parentId]!.push(id)
    })
    if (nodes.length > 0 && root < 0) throw new RangeError('the hierarchy has no root node r')
    this.root = root
  }

  /** Cache figures, for logs and the bench. */
  get cacheStats(): { tiles: number; bytes: number; hits: number; misses: number; evictions: number } {
    const c = this.cache
    return { tiles: c.size, bytes: c.bytes, hits: c.hits, misses: c.misses, evictions: c.evictions }
  }

  /** The per-point standard uncertainty of a point found by `nearest`, when its tile is cached and has them. */
  uncertaintyOf(key: string, index: number): number | null {
    const value = this.cache.get(key)?.tile.uncertainties?.[index]
    return value === undefined ? null : value
  }

  clearCache(): void {
    this.cache.clear()
  }

  /**
   * The k stored points nearest to (x, y, z), nearest first, none farther than maxDistance (inclusive).
   * Ties at equal distance are broken arbitrarily.
   */
  async nearest(x: number, y: number, z: number, k = 1, maxDistance = Infinity): Promise<NearestPoint[]> {
    if (!Number.isFinite(x) || !Number.isFinite(y) || !Number.isFinite(z)) throw new RangeError('the query point must be finite')
    if (!(maxDistance >= 0)) throw new RangeError(`maxDistance must be at least 0, got ${maxDistance}`)
    const heap = new KBest(k, maxDistance)
    if (this.root < 0) return []
    await this.prefetchChain(x, y, z)
    const queue = new NodeQueue()
    const rootDistance = this.boxDistance2(this.root, x, y, z)
    if (rootDistance <= heap.bound2) queue.push(rootDistance, this.root)
    while (queue.size > 0) {
      if (queue.topKey() > heap.bound2) break
      const id = queue.pop()
      const loaded = this.cached(id) ?? (await this.load(id))
      loaded.grid.nearest(x, y, z, heap, id)
      for (const child of this.children[id]!) {
        const d2 = this.boxDistance2(child, x, y, z)
        if (d2 <= heap.bound2) queue.push(d2, child)
      }
    }
    return heap.sortedSlots().map((slot) => ({
      x: heap.xs[slot]!,
      y: heap.ys[slot]!,
      z: heap.zs[slot]!,
      distance: Math.sqrt(heap.dist2[slot]!),
      key: this.keys[heap.tags[slot]!]!,
      index: heap.indices[slot]!,
    }))
  }

  /**
   * Calls `visit` for every stored point inside the closed box (world coordinates), node by node, and
   * returns how many there were. For sections: pass the slab's bounding box and test the slab in `visit`.
   */
  async forEachPointInBox(box: Box3, visit: BoxVisitor): Promise<number> {
    if (this.root < 0) return 0
    let visited = 0
    const stack = [this.root]
    while (stack.length > 0) {
      const id = stack.pop()!
      if (!this.boxOverlaps(id, box)) continue
      const loaded = this.cached(id) ?? (await this.load(id))
      const p = loaded.tile.positions
      const [ox, oy, oz] = loaded.tile.origin
      loaded.grid.forEachInBox(box.min, box.max, (i) => {
        visited++
        visit(ox + p[3 * i]!, oy + p[3 * i + 1]!, oz + p[3 * i + 2]!, loaded, i)
      })
      for (const child of this.children[id]!) stack.push(child)
    }
    return visited
  }

  /**
   * Calls `visit` for every stored point whose distance to the plane through `origin` with unit normal `n`
   * is at most `half` (a slab of thickness 2 half), and returns how many there were. Nodes whose box lies
   * wholly outside the slab are skipped (the box's projection on n is its centre's distance plus or minus
   * the half-extents dotted with |n|).
   */
  async forEachPointInSlab(origin: readonly number[], n: readonly number[], half: number, visit: BoxVisitor): Promise<number> {
    if (this.root < 0) return 0
    const [ox, oy, oz] = origin as [number, number, number]
    const [nx, ny, nz] = n as [number, number, number]
    let visited = 0, sinceYield = 0
    const stack = [this.root]
    const b = this.boxes
    while (stack.length > 0) {
      const id = stack.pop()!
      const o = id * 6
      const cx = (b[o]! + b[o + 3]!) / 2, cy = (b[o + 1]! + b[o + 4]!) / 2, cz = (b[o + 2]! + b[o + 5]!) / 2
      const reach = (Math.abs(nx) * (b[o + 3]! - b[o]!) + Math.abs(ny) * (b[o + 4]! - b[o + 1]!) + Math.abs(nz) * (b[o + 5]! - b[o + 2]!)) / 2
      if (Math.abs(nx * (cx - ox) + ny * (cy - oy) + nz * (cz - oz)) > half + reach) continue
      if (this.counts[id]! > 0) {
        if (sinceYield >= YIELD_POINTS) (sinceYield = 0), await yieldToLoop()
        sinceYield += this.counts[id]!
        const loaded = this.cached(id) ?? (await this.load(id))
        const p = loaded.tile.positions
        const [tx, ty, tz] = loaded.tile.origin
        const count = loaded.tile.count
        for (let i = 0; i < count; i++) {
          const x = tx + p[3 * i]!, y = ty + p[3 * i + 1]!, z = tz + p[3 * i + 2]!
          if (Math.abs(nx * (x - ox) + ny * (y - oy) + nz * (z - oz)) <= half) {
            visited++
            visit(x, y, z, loaded, i)
          }
        }
      }
      for (const child of this.children[id]!) stack.push(child)
    }
    return visited
  }

  /** Calls `visit` for every stored point, node by node; returns the count. */
  async forEachPoint(visit: BoxVisitor): Promise<number> {
    if (this.root < 0) return 0
    let visited = 0, sinceYield = 0
    for (let id = 0; id < this.keys.length; id++) {
      if (this.counts[id] === 0) continue
      if (sinceYield >= YIELD_POINTS) (sinceYield = 0), await yieldToLoop()
      sinceYield += this.counts[id]!
      const loaded = this.cached(id) ?? (await this.load(id))
      const p = loaded.tile.positions
      const [tx, ty, tz] = loaded.tile.origin
      for (let i = 0; i < loaded.tile.count; i++) {
        visited++
        visit(tx + p[3 * i]!, ty + p[3 * i + 1]!, tz + p[3 * i + 2]!, loaded, i)
      }
    }
    return visited
  }

  /** Every stored point within `radius` of the centre (inclusive), nearest first. */
  async pointsWithin(x: number, y: number, z: number, radius: number): Promise<NearestPoint[]> {
    if (!(radius >= 0)) throw new RangeError(`radius must be at least 0, got ${radius}`)
    const found: NearestPoint[] = []
    const box: Box3 = { min: [x - radius, y - radius, z - radius], max: [x + radius, y + radius, z + radius] }
    const r2 = radius * radius
    await this.forEachPointInBox(box, (px, py, pz, loaded, index) => {
      const d2 = (px - x) ** 2 + (py - y) ** 2 + (pz - z) ** 2
      if (d2 <= r2) found.push({ x: px, y: py, z: pz, distance: Math.sqrt(d2), key: loaded.key, index })
    })
    return found.sort((a, b) => a.distance - b.distance)
  }

  /**
   * The nodes whose boxes hold the query point, root to leaf, are all searched; when several of their tiles
   * are missing they are fetched in one batch instead of one round trip each.
   */
  private async prefetchChain(x: number, y: number, z: number): Promise<void> {
    if (!this.loadTiles) return
    const missing: number[] = []
    let id = this.root
    for (;;) {
      if (!this.cached(id) && !this.inflight.has(id) && this.counts[id]! > 0) missing.push(id)
      const next = this.children[id]!.find((c) => this.boxDistance2(c, x, y, z) === 0)
      if (next === undefined) break
      id = next
    }
    if (missing.length < 2) return
    const batch = this.loadTiles(missing.map((m) => this.keys[m]!))
    await Promise.all(missing.map((m) => this.load(m, batch)))
  }

  private boxDistance2(id: number, x: number, y: number, z: number): number {
    const b = this.boxes
    const o = id * 6
    const dx = Math.max(b[o]! - x, 0, x - b[o + 3]!)
    const dy = Math.max(b[o + 1]! - y, 0, y - b[o + 4]!)
    const dz = Math.max(b[o + 2]! - z, 0, z - b[o + 5]!)
    return dx * dx + dy * dy + dz * dz
  }

  private boxOverlaps(id: number, box: Box3): boolean {
    const b = this.boxes
    const o = id * 6
    for (let axis = 0; axis < 3; axis++) {
      if (b[o + axis]! > box.max[axis]! || b[o + 3 + axis]! < box.min[axis]!) return false
    }
    return true
  }

  private cached(id: number): LoadedTile | undefined {
    return this.cache.get(this.keys[id]!)
  }

  /** Loads, checks and indexes one tile; concurrent queries share one load. */
  private load(id: number, batch?: Promise<Map<string, DecodedTile>>): Promise<LoadedTile> {
    const pending = this.inflight.get(id)
    if (pending) return pending
    const key = this.keys[id]!
    const promise = (async () => {
      try {
        const fromBatch = batch ? (await batch).get(key) : undefined
        const tile = fromBatch ?? (await this.loadTile(key))
        if (tile.count !== this.counts[id]) {
          throw new Error(`tile ${key} holds ${tile.count} points, the hierarchy says ${this.counts[id]}`)
        }
        const grid = new UniformGrid(tile.positions, tile.count, tile.origin, GRID_OPTIONS)
        const loaded: LoadedTile = { key, tile, grid }
        this.cache.set(key, loaded, tileBytes(tile) + grid.byteLength)
        return loaded
      } finally {
        this.inflight.delete(id)
      }
    })()
    this.inflight.set(id, promise)
    return promise
  }
}

function tileBytes(tile: DecodedTile): number {
  return (
    tile.positions.byteLength +
    (tile.colors?.byteLength ?? 0) +
    (tile.intensities?.byteLength ?? 0) +
    (tile.uncertainties?.byteLength ?? 0)
  )
}

/** A binary min-heap of node ids keyed by squared box distance. */
class NodeQueue {
  private readonly keys: number[] = []
  private readonly ids: number[] = []

  get size(): number {
    return this.ids.length
  }

  topKey(): number {
    return this.keys[0]!
  }

  push(key: number, id: number): void {
    let at = this.ids.length
    this.keys.push(key)
    this.ids.push(id)
    while (at > 0) {
      const parent = (at - 1) >> 1
      if (this.keys[parent]! <= key) break
      this.keys[at] = this.keys[parent]!
      this.ids[at] = this.ids[parent]!
      at = parent
    }
    this.keys[at] = key
    this.ids[at] = id
  }

  pop(): number {
    const top = this.ids[0]!
    const lastKey = this.keys.pop()!
    const lastId = this.ids.pop()!
    const n = this.ids.length
    if (n > 0) {
      let at = 0
      for (;;) {
        const left = 2 * at + 1
        if (left >= n) break
        const right = left + 1
        const child = right < n && this.keys[right]! < this.keys[left]! ? right : left
        if (this.keys[child]! >= lastKey) break
        this.keys[at] = this.keys[child]!
        this.ids[at] = this.ids[child]!
        at = child
      }
      this.keys[at] = lastKey
      this.ids[at] = lastId
    }
    return top
  }
}
