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

  /** Told of each entry dropped to make room (not of `delete` or `clear`). */
  onEvict: ((key: string, bytes: number) => void) | null = null

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
      this.onEvict?.(oldest, entry.bytes)
    }
  }

  /** Drops one entry; answers the bytes it held (0 when there was none). */
  delete(key: string): number {
    const entry = this.entries.get(key)
    if (!entry) return 0
    this.entries.delete(key)
    this.used -= entry.bytes
    return entry.bytes
  }

  /** Drops every entry whose key starts with `prefix`. */
  deletePrefix(prefix: string): void {
    for (const [key, entry] of this.entries) {
      if (!key.startsWith(prefix)) continue
      this.entries.delete(key)
      this.used -= entry.bytes
    }
  }

  clear(): void {
    this.entries.clear()
    this.used = 0
  }
}

/** What a nearest-point index needs of its tile cache: its own, or its scope of one shared by many. */
export interface TileCache<V> {
  get(key: string): V | undefined
  set(key: string, value: V, bytes: number): void
  clear(): void
  readonly size: number
  readonly bytes: number
  readonly hits: number
  readonly misses: number
  readonly evictions: number
}

/**
 * One byte budget shared by several users (the nearest-point indexes of every scan a server has open): each
 * gets a scope that sees only its own keys and keeps its own figures, while the least recently used entry of
 * any scope goes first when the budget is passed. The server's memory for cached tiles is then one number,
 * however many scans are open.
 */
export class SharedByteCache<V> {
  private readonly lru: ByteLruCache<V>
  private readonly scopes = new Map<string, CacheScope<V>>()

  constructor(maxBytes: number) {
    this.lru = new ByteLruCache(maxBytes)
    this.lru.onEvict = (key, bytes) => this.scopes.get(key.slice(0, key.indexOf('/')))?.evicted(bytes)
  }

  get maxBytes(): number {
    return this.lru.maxBytes
  }

  get bytes(): number {
    return this.lru.bytes
  }

  get size(): number {
    return this.lru.size
  }

  /** The scope named `name` (no '/'): the same one each time until it is dropped. */
  scope(name: string): TileCache<V> {
    if (name.includes('/')) throw new RangeError(`a cache scope's name has no '/': ${name}`)
    let scope = this.scopes.get(name)
    if (!scope) this.scopes.set(name, (scope = new CacheScope(this.lru, name)))
    return scope
  }

  /** Frees a scope's entries and forgets it. */
  drop(name: string): void {
    this.scopes.get(name)?.clear()
    this.scopes.delete(name)
  }

  clear(): void {
    for (const scope of this.scopes.values()) scope.clear()
  }
}

class CacheScope<V> implements TileCache<V> {
  size = 0
  bytes = 0
  hits = 0
  misses = 0
  evictions = 0
  private readonly prefix: string

  constructor(
    private readonly lru: ByteLruCache<V>,
    name: string,
  ) {
    this.prefix = `${name}/`
  }

  get(key: string): V | undefined {
    const value = this.lru.get(this.prefix + key)
    if (value === undefined) this.misses++
    else this.hits++
    return value
  }

  set(key: string, value: V, bytes: number): void {
    const full = this.prefix + key
    if (this.lru.has(full)) this.bytes -= this.lru.delete(full)
    else this.size++
    this.bytes += bytes
    this.lru.set(full, value, bytes)
  }

  evicted(bytes: number): void {
    this.size--
    this.bytes -= bytes
    this.evictions++
  }

  clear(): void {
    this.lru.deletePrefix(this.prefix)
    this.size = 0
    this.bytes = 0
  }
}
