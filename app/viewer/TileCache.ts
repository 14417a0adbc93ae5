/**
 * Decoded tiles with their GPU geometry, least recently used first, bounded in bytes. A tile counts its arrays
 * twice: once in memory (kept for picking) and once on the GPU. Tiles are shared by every placement of the same
 * scan. Eviction never takes a tile the current view draws or wants.
 */
import * as THREE from 'three'
import type { DecodedTile } from '@shared/points/tileFormat'
import type { Vec3 } from './types'

export interface TileEntry {
  key: string
  scanId: string
  nodeKey: string
  count: number
  /** The node's centre, scan frame (float64). */
  origin: Vec3
  /** Offsets from `origin`, x y z interleaved. */
  positions: Float32Array
  hasRgb: boolean
  hasIntensity: boolean
  intensityMin: number
  intensityMax: number
  geometry: THREE.BufferGeometry
  bytes: number
}

export function tileKey(scanId: string, nodeKey: string): string {
  return `${scanId}/${nodeKey}`
}

/** Builds the GPU geometry of a tile: positions as they come, colours normalised from uint8, raw intensities. */
export function entryFromTile(scanId: string, nodeKey: string, tile: DecodedTile, radius: number): TileEntry {
  const geometry = new THREE.BufferGeometry()
  geometry.setAttribute('position', new THREE.BufferAttribute(tile.positions, 3))
  let bytes = tile.positions.byteLength
  if (tile.colors) {
    geometry.setAttribute('rgb', new THREE.BufferAttribute(tile.colors, 3, true))
    bytes += tile.colors.byteLength
  }
  let intensityMin = Infinity
  let intensityMax = -Infinity
  if (tile.intensities) {
    geometry.setAttribute('intensity', new THREE.BufferAttribute(tile.intensities, 1))
    bytes += tile.intensities.byteLength
    const values = tile.intensities
    for (let i = 0; i < values.length; i++) {
      const v = values[i]!
      if (v < intensityMin) intensityMin = v
      if (v > intensityMax) intensityMax = v
    }
  }
  // The node's cube bounds every offset: no need to scan the positions (three's frustum test reads this).
  geometry.boundingSphere = new THREE.Sphere(new THREE.Vector3(0, 0, 0), radius)
  return {
    key: tileKey(scanId, nodeKey),
    scanId,
    nodeKey,
    count: tile.count,
    origin: [...tile.origin],
    positions: tile.positions,
    hasRgb: tile.colors !== undefined,
    hasIntensity: tile.intensities !== undefined,
    intensityMin,
    intensityMax,
    geometry,
    bytes: bytes * 2,
  }
}

export class TileCache {
  // A Map keeps insertion order: re-inserting on use makes its first entries the least recently used.
  private entries = new Map<string, TileEntry>()
  private total = 0

  constructor(public maxBytes: number) {}

  get size(): number {
    return this.entries.size
  }

  get bytes(): number {
    return this.total
  }

  has(key: string): boolean {
    return this.entries.has(key)
  }

  peek(key: string): TileEntry | undefined {
    return this.entries.get(key)
  }

  /** Marks an entry as just used. */
  touch(key: string): void {
    const entry = this.entries.get(key)
    if (!entry) return
    this.entries.delete(key)
    this.entries.set(key, entry)
  }

  add(entry: TileEntry): void {
    const old = this.entries.get(entry.key)
    if (old) this.remove(old)
    this.entries.set(entry.key, entry)
    this.total += entry.bytes
  }

  /** Evicts least recently used entries outside `keep` until the cache fits; `onEvict` runs before disposal. */
  evict(keep: ReadonlySet<string>, onEvict: (entry: TileEntry) => void): void {
    if (this.total <= this.maxBytes) return
    for (const entry of [...this.entries.values()]) {
      if (this.total <= this.maxBytes) break
      if (keep.has(entry.key)) continue
      onEvict(entry)
      this.remove(entry)
    }
  }

  /** Drops every tile of a scan that is no longer placed. */
  dropScan(scanId: string, onEvict: (entry: TileEntry) => void): void {
    for (const entry of [...this.entries.values()]) {
      if (entry.scanId !== scanId) continue
      onEvict(entry)
      this.remove(entry)
    }
  }

  private remove(entry: TileEntry): void {
    this.entries.delete(entry.key)
    this.total -= entry.bytes
    entry.geometry.dispose()
  }

  dispose(): void {
    for (const entry of this.entries.values()) entry.geometry.dispose()
    this.entries.clear()
    this.total = 0
  }
}
