/**
 * A least-recently-used cache bounded in bytes (a Map keeps insertion order: a hit is moved to the end,
 * the oldest entries are dropped first). The newest entry is kept even when it alone exceeds the budget,
 * so a query can always hold the tile it is working on.
 */
export class ByteLruCache<V> {
  private readonly entries = new Map<string, { value: V; bytes: number }>()
  private used = 0
  hits = 0
  misses = 0
  evictions = 0

  constructor(readonly maxBytes: number) {
    if (!(maxBytes >= 0)) throw new RangeError(`maxBytes must be at least 0, got ${maxBytes}`)
  }

  get bytes(): number {
    return this.used
  }

  get size(): number {
    return this.entries.size
  }

  has(key: string): boolean {
    return this.entries.has(key)
  }

  get(key: string): V | undefined {
    const entry = this.entries.get(key)
    if (!entry) {
      this.misses++
      return undefined
    }
    this.hits++
    this.entries.delete(key)
    this.entries.set(key, entry)
    return entry.value
  }

  set(key: string, value: V, bytes: number): void {
    const old = this.entries.get(key)
    if (old) {
      this.used -= old.bytes
      this.entries.delete(key)
    }
    this.entries.set(key, { value, bytes })
    this.used += bytes
    for (const [oldest, entry] of this.entries) {
      if (this.used <= this.maxBytes || this.entries.size <= 1) break
      this.entries.delete(oldest)
      this.used -= entry.bytes
      this.evictions++
    }
  }

  clear(): void {
    this.entries.clear()
    this.used = 0
  }
}
