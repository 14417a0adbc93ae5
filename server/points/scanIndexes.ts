import type { Db } from '../db'
import { HttpError } from '../errors'
import { getTile, listTiles } from '../repositories/scans'
import { decodeTile } from '@shared/points/tileFormat'
import { NearestIndex } from './index/nearestIndex'
import type { ScanIndexes } from '../types'

/**
 * One nearest-point index per ready scan, built from its hierarchy on first use and kept while used
 * (least recently used scans dropped past `maxScans`). Tiles come from PostgreSQL through each index's
 * own byte-bounded cache.
 */
export class ScanIndexRegistry implements ScanIndexes {
  private readonly indexes = new Map<string, Promise<NearestIndex>>()

  constructor(
    private readonly db: Db,
    private readonly maxScans = 16,
    private readonly cacheBytesPerScan = 128 * 1024 * 1024,
  ) {}

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
        cacheBytes: this.cacheBytesPerScan,
        loadTile: async (key) => {
          const tile = await getTile(this.db, scanId, key)
          if (!tile) throw new Error(`tile ${key} of scan ${scanId} is missing`)
          return decodeTile(new Uint8Array(tile.data.buffer, tile.data.byteOffset, tile.data.byteLength))
        },
      })
    })()
    index.catch(() => this.indexes.delete(scanId))
    this.indexes.set(scanId, index)
    while (this.indexes.size > this.maxScans) this.indexes.delete(this.indexes.keys().next().value!)
    return index
  }

  async nearest(scanId: string, x: number, y: number, z: number, k: number, maxDistance?: number) {
    const found = await (await this.index(scanId)).nearest(x, y, z, k, maxDistance ?? Infinity)
    return found.map((p) => ({ x: p.x, y: p.y, z: p.z, distance: p.distance }))
  }

  forget(scanId: string): void {
    this.indexes.delete(scanId)
  }
}
