import type { Db } from '../db'
import { HttpError } from '../errors'
import { getTilesForSearch, listTiles } from '../repositories/scans'
import { decodeTile } from '@shared/points/tileFormat'
import { NearestIndex, type LoadedTile } from './index/nearestIndex'
import { SharedByteCache } from './index/tileCache'
import type { PointFilter, ScanIndexes, SnappedPoint } from '../types'

/**
 * One nearest-point index per ready scan, built from its hierarchy on first use and kept while used
 * (least recently used scans dropped past `maxScans`; an index without its tiles is small). Tiles come
 * from PostgreSQL into one cache for all scans, bounded in bytes (`cacheBytes`, the `nearestCacheBytes`
 * limit): the least recently used tile of any scan leaves first.
 */
export class ScanIndexRegistry implements ScanIndexes {
  private readonly indexes = new Map<string, Promise<NearestIndex>>()
  private readonly tiles: SharedByteCache<LoadedTile>
  private readonly maxScans: number

  constructor(
    private readonly db: Db,
    options: { maxScans?: number; cacheBytes?: number } = {},
  ) {
    this.maxScans = options.maxScans ?? 64
    this.tiles = new SharedByteCache(options.cacheBytes ?? 1024 ** 3)
  }

  /** The shared tile cache's figures: bytes held, its budget, tiles held. */
  get cacheUse(): { bytes: number; maxBytes: number; tiles: number } {
    return { bytes: this.tiles.bytes, maxBytes: this.tiles.maxBytes, tiles: this.tiles.size }
  }

  private index(scanId: string): Promise<NearestIndex> {
    let index = this.indexes.get(scanId)
    if (index) {
      this.indexes.delete(scanId)
      this.indexes.set(scanId, index)
      return index
    }
    index = (async () => {
      const rows = await listTiles(this.db, scanId)
      if (!rows.length) throw HttpError.notFound('The scan has no stored points.')
      const nodes = rows.map((t) => ({ key: t.node_key, level: t.level, pointCount: t.point_count, bounds: { min: [t.min_x, t.min_y, t.min_z] as [number, number, number], max: [t.max_x, t.max_y, t.max_z] as [number, number, number] } }))
      return new NearestIndex({
        nodes,
        cache: this.tiles.scope(scanId),
        loadTile: async (key) => {
          const tile = (await getTilesForSearch(this.db, scanId, [key])).get(key)
          if (!tile) throw new Error(`tile ${key} of scan ${scanId} is missing`)
          return decodeTile(new Uint8Array(tile.buffer, tile.byteOffset, tile.byteLength))
        },
        loadTiles: async (keys) => {
          const found = await getTilesForSearch(this.db, scanId, keys)
          return new Map([...found].map(([key, data]) => [key, decodeTile(new Uint8Array(data.buffer, data.byteOffset, data.byteLength))]))
        },
      })
    })()
    index.catch(() => this.forget(scanId))
    this.indexes.set(scanId, index)
    while (this.indexes.size > this.maxScans) this.forget(this.indexes.keys().next().value!)
    return index
  }

  async nearest(scanId: string, x: number, y: number, z: number, k: number, maxDistance?: number) {
    const found = await (await this.index(scanId)).nearest(x, y, z, k, maxDistance ?? Infinity)
    return found.map((p) => ({ x: p.x, y: p.y, z: p.z, distance: p.distance }))
  }

  /** The nearest stored point with its per-point standard uncertainty when the scan has one. */
  async snap(scanId: string, x: number, y: number, z: number, keep?: PointFilter): Promise<SnappedPoint | null> {
    const index = await this.index(scanId)
    let found: Awaited<ReturnType<NearestIndex['nearest']>>[number] | undefined
    if (!keep) [found] = await index.nearest(x, y, z, 1)
    else {
      // Never to a cut point: the nearest that counts, among ever more neighbours.
      for (let k = 16; !found; k *= 8) {
        const near = await index.nearest(x, y, z, k)
        found = near.find((p) => keep(p.x, p.y, p.z))
        if (near.length < k || k > 1 << 20) break
      }
    }
    if (!found) return null
    return { x: found.x, y: found.y, z: found.z, distance: found.distance, uncertainty: index.uncertaintyOf(found.key, found.index) }
  }

  /**
   * Stored points within `half` of a plane (scan frame), as x y z triples, float64. With `maxPoints`, reading
   * stops at maxPoints + 1 points: the caller tells an over-full slab by the length, and no more is held.
   */
  async slab(scanId: string, origin: readonly number[], normal: readonly number[], half: number, maxPoints = Infinity, keep?: PointFilter): Promise<Float64Array> {
    const out = new GrowableXyz()
    const index = await this.index(scanId)
    await collectUpTo(out, maxPoints, (visit) => index.forEachPointInSlab(origin, normal, half, visit), keep)
    return out.array()
  }

  /** Every stored point of the scan (scan frame), x y z triples; with `maxPoints`, as `slab`. */
  async allPoints(scanId: string, maxPoints = Infinity, keep?: PointFilter): Promise<Float64Array> {
    const out = new GrowableXyz()
    const index = await this.index(scanId)
    await collectUpTo(out, maxPoints, (visit) => index.forEachPoint(visit), keep)
    return out.array()
  }

  /** Tile cache figures of a scan's index (the bench). */
  async cacheStats(scanId: string) {
    return (await this.index(scanId)).cacheStats
  }

  /** Drops every cached tile (the bench's cold runs). */
  async clearCaches(): Promise<void> {
    this.tiles.clear()
  }

  forget(scanId: string): void {
    this.indexes.delete(scanId)
    this.tiles.drop(scanId)
  }
}

/** Thrown from a visitor to stop a walk once the cap is passed (the tree walks have no other way out). */
const FULL = Symbol('full')

async function collectUpTo(out: GrowableXyz, maxPoints: number, walk: (visit: (x: number, y: number, z: number) => void) => Promise<unknown>, keep?: PointFilter): Promise<void> {
  try {
    await walk((x, y, z) => {
      if (keep && !keep(x, y, z)) return
      out.push(x, y, z)
      if (out.count > maxPoints) throw FULL
    })
  } catch (err) {
    if (err !== FULL) throw err
  }
}

/** An x y z list that doubles its float64 store as it grows. */
class GrowableXyz {
  private data = new Float64Array(3 * 4096)
  private length = 0

  push(x: number, y: number, z: number): void {
    if (this.length + 3 > this.data.length) {
      const next = new Float64Array(this.data.length * 2)
      next.set(this.data)
      this.data = next
    }
    this.data[this.length++] = x
    this.data[this.length++] = y
    this.data[this.length++] = z
  }

  get count(): number {
    return this.length / 3
  }

  array(): Float64Array {
    return this.data.slice(0, this.length)
  }
}
