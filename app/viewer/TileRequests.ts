/**
 * Tile requests in priority order with a cap on how many are in flight. `want` replaces the waiting list with
 * what the current view needs (biggest on screen first); requests already in flight run on, since their tiles
 * are cached either way. A failed tile waits before it is asked for again, a little longer each time.
 */
import { decodeTile, type DecodedTile } from '@shared/points/tileFormat'
import type { PointSource } from './types'

export interface TileWant {
  key: string
  scanId: string
  nodeKey: string
  priority: number
}

interface Failure {
  attempts: number
  retryAt: number
}

export class TileRequests {
  private waiting: TileWant[] = []
  private inFlight = new Map<string, AbortController>()
  private failures = new Map<string, Failure>()
  private disposed = false

  constructor(
    private source: PointSource,
    public maxInFlight: number,
    private onLoaded: (want: TileWant, tile: DecodedTile) => void,
    private onFailed: (want: TileWant, error: unknown) => void,
  ) {}

  /** Waiting plus in flight. */
  get pending(): number {
    return this.waiting.length + this.inFlight.size
  }

  get inFlightCount(): number {
    return this.inFlight.size
  }

  isInFlight(key: string): boolean {
    return this.inFlight.has(key)
  }

  want(list: TileWant[]): void {
    const now = performance.now()
    this.waiting = list
      .filter((w) => !this.inFlight.has(w.key) && (this.failures.get(w.key)?.retryAt ?? 0) <= now)
      .sort((a, b) => b.priority - a.priority)
    this.pump()
  }

  private pump(): void {
    while (!this.disposed && this.inFlight.size < this.maxInFlight) {
      const next = this.waiting.shift()
      if (!next) return
      if (this.inFlight.has(next.key)) continue
      void this.fetch(next)
    }
  }

  private async fetch(want: TileWant): Promise<void> {
    const controller = new AbortController()
    this.inFlight.set(want.key, controller)
    try {
      const bytes = await this.source.tile(want.scanId, want.nodeKey, controller.signal)
      if (this.disposed) return
      const tile = decodeTile(bytes)
      this.failures.delete(want.key)
      this.onLoaded(want, tile)
    } catch (error) {
      if (this.disposed || controller.signal.aborted) return
      const attempts = (this.failures.get(want.key)?.attempts ?? 0) + 1
      this.failures.set(want.key, { attempts, retryAt: performance.now() + Math.min(30_000, 1000 * 2 ** attempts) })
      this.onFailed(want, error)
    } finally {
      this.inFlight.delete(want.key)
      this.pump()
    }
  }

  /** Forgets a scan: its waiting requests go, its requests in flight are aborted. */
  dropScan(scanId: string): void {
    this.waiting = this.waiting.filter((w) => w.scanId !== scanId)
    for (const [key, controller] of this.inFlight) if (key.startsWith(`${scanId}/`)) controller.abort()
  }

  dispose(): void {
    this.disposed = true
    this.waiting = []
    for (const controller of this.inFlight.values()) controller.abort()
    this.inFlight.clear()
  }
}
