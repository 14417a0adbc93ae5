/**
 * The k best (closest) candidates seen so far: a bounded max-heap on squared distance, with each
 * candidate's world coordinates, a tag (which tile) and its index there. Fixed-size typed arrays, no
 * per-candidate objects.
 */
export class KBest {
  readonly k: number
  size = 0
  /** Squared distance limit while fewer than k are held (maxDistance^2, inclusive). */
  limit2: number
  readonly dist2: Float64Array
  readonly xs: Float64Array
  readonly ys: Float64Array
  readonly zs: Float64Array
  readonly tags: Int32Array
  readonly indices: Int32Array

  constructor(k: number, maxDistance = Infinity) {
    if (!Number.isInteger(k) || k < 1) throw new RangeError(`k must be a whole number of at least 1, got ${k}`)
    this.k = k
    this.limit2 = maxDistance * maxDistance
    this.dist2 = new Float64Array(k)
    this.xs = new Float64Array(k)
    this.ys = new Float64Array(k)
    this.zs = new Float64Array(k)
    this.tags = new Int32Array(k)
    this.indices = new Int32Array(k)
  }

  reset(maxDistance = Infinity): void {
    this.size = 0
    this.limit2 = maxDistance * maxDistance
  }

  get full(): boolean {
    return this.size === this.k
  }

  /** The squared distance a new candidate must not exceed (while filling) or must beat (once full). */
  get bound2(): number {
    return this.size < this.k ? this.limit2 : this.dist2[0]!
  }

  /** Offers a candidate; returns the new bound2. */
  offer(d2: number, x: number, y: number, z: number, tag: number, index: number): number {
    const k = this.k
    if (this.size < k) {
      if (d2 > this.limit2) return this.bound2
      let at = this.size++
      // Sift up.
      while (at > 0) {
        const parent = (at - 1) >> 1
        if (this.dist2[parent]! >= d2) break
        this.move(parent, at)
        at = parent
      }
      this.put(at, d2, x, y, z, tag, index)
      return this.bound2
    }
    if (d2 >= this.dist2[0]!) return this.dist2[0]!
    // Replace the worst (the root) and sift down.
    let at = 0
    for (;;) {
      const left = 2 * at + 1
      if (left >= k) break
      const right = left + 1
      const child = right < k && this.dist2[right]! > this.dist2[left]! ? right : left
      if (this.dist2[child]! <= d2) break
      this.move(child, at)
      at = child
    }
    this.put(at, d2, x, y, z, tag, index)
    return this.dist2[0]!
  }

  /** Slot numbers ordered by ascending distance. */
  sortedSlots(): number[] {
    const slots = Array.from({ length: this.size }, (_, i) => i)
    return slots.sort((a, b) => this.dist2[a]! - this.dist2[b]!)
  }

  private move(from: number, to: number): void {
    this.dist2[to] = this.dist2[from]!
    this.xs[to] = this.xs[from]!
    this.ys[to] = this.ys[from]!
    this.zs[to] = this.zs[from]!
    this.tags[to] = this.tags[from]!
    this.indices[to] = this.indices[from]!
  }

  private put(at: number, d2: number, x: number, y: number, z: number, tag: number, index: number): void {
    this.dist2[at] = d2
    this.xs[at] = x
    this.ys[at] = y
    this.zs[at] = z
    this.tags[at] = tag
    this.indices[at] = index
  }
}
