import type { PointBatch } from './readers/types'

export type { PointBatch }

/**
 * A growable columnar store of one scan's points, filled from the readers' batches.
 *
 * Units: positions are metres in the scan's own frame (float64, x y z interleaved), colours 0-255 r g b,
 * intensities as the reader gives them, uncertainties metres (per-point standard uncertainty).
 *
 * Growth is geometric, so appending n points costs O(n) amortised: the capacity doubles while it is below
 * 4 Mi points and grows by half above that, which keeps the transient of a growth step (old and new arrays
 * side by side) smaller at the sizes where it matters. A reader that knows its point count up front (PLY,
 * LAS, PCD headers) should pass it as `capacity`: then nothing is reallocated.
 *
 * Memory: 24 bytes a point for positions, plus 3 (colours), 4 (intensities), 4 (uncertainties). For 10 M
 * points with colour and intensity that is 310 MB when the capacity is exact (given up front, or after
 * trim()); while growing without a hint the capacity may exceed the count by up to half, and one growth step
 * briefly holds old and new arrays. The octree build adds 9 bytes a point (a Uint32 permutation and a
 * Uint32 + Uint8 scratch, the scratch freed when the build returns) and 8 MB for its sampling grid, and the
 * scan statistics' grid about 4-8 bytes a point: about 450 MB all told at 10 M points.
 */

export interface PointBufferOptions {
  /** Initial capacity in points (for example the count a file header declares). */
  capacity?: number
  /** Allocate the attribute columns up front; otherwise each appears with the first batch that has it. */
  colors?: boolean
  intensities?: boolean
  uncertainties?: boolean
}

const MIN_CAPACITY = 1024
const DOUBLING_LIMIT = 4 * 1024 * 1024

export class PointBuffer {
  /** Points stored; the arrays may be longer (capacity). */
  count = 0
  positions: Float64Array
  colors: Uint8Array | null = null
  intensities: Float32Array | null = null
  uncertainties: Float32Array | null = null
  private cap: number

  constructor(options: PointBufferOptions = {}) {
    const requested = options.capacity ?? MIN_CAPACITY
    if (!Number.isInteger(requested) || requested < 0) throw new RangeError(`capacity must be a whole number, got ${requested}`)
    this.cap = requested
    this.positions = new Float64Array(this.cap * 3)
    if (options.colors) this.colors = new Uint8Array(this.cap * 3)
    if (options.intensities) this.intensities = new Float32Array(this.cap)
    if (options.uncertainties) this.uncertainties = new Float32Array(this.cap)
  }

  /** A buffer holding exactly these arrays (no copy); `positions` is x y z interleaved. */
  static fromArrays(arrays: {
    positions: Float64Array
    colors?: Uint8Array
    intensities?: Float32Array
    uncertainties?: Float32Array
  }): PointBuffer {
    const count = Math.floor(arrays.positions.length / 3)
    if (count * 3 !== arrays.positions.length) throw new RangeError('positions must hold x y z for every point')
    const buffer = new PointBuffer({ capacity: 0 })
    buffer.positions = arrays.positions
    buffer.cap = count
    buffer.count = count
    if (arrays.colors) buffer.colors = checked('colors', arrays.colors, count * 3)
    if (arrays.intensities) buffer.intensities = checked('intensities', arrays.intensities, count)
    if (arrays.uncertainties) buffer.uncertainties = checked('uncertainties', arrays.uncertainties, count)
    return buffer
  }

  get capacity(): number {
    return this.cap
  }

  /** Bytes held by the arrays (capacity, not count). */
  get byteLength(): number {
    return (
      this.positions.byteLength +
      (this.colors?.byteLength ?? 0) +
      (this.intensities?.byteLength ?? 0) +
      (this.uncertainties?.byteLength ?? 0)
    )
  }

  /**
   * Copies a batch in (the batch's arrays may be reused by the reader afterwards). A column that an earlier
   * batch lacked reads 0 for those points; a column a later batch lacks is 0 for its points.
   */
  append(batch: PointBatch): void {
    const n = batch.count
    if (n === 0) return
    if (batch.positions.length < n * 3) throw new RangeError(`batch of ${n} points has ${batch.positions.length} coordinates`)
    this.reserve(this.count + n)
    const at = this.count
    this.positions.set(n * 3 === batch.positions.length ? batch.positions : batch.positions.subarray(0, n * 3), at * 3)
    if (batch.colors) {
      this.colors ??= new Uint8Array(this.cap * 3)
      this.colors.set(batch.colors.subarray(0, n * 3), at * 3)
    }
    if (batch.intensities) {
      this.intensities ??= new Float32Array(this.cap)
      this.intensities.set(batch.intensities.subarray(0, n), at)
    }
    if (batch.uncertainties) {
      this.uncertainties ??= new Float32Array(this.cap)
      this.uncertainties.set(batch.uncertainties.subarray(0, n), at)
    }
    this.count += n
  }

  /** Makes room for at least `points` points. */
  reserve(points: number): void {
    if (points <= this.cap) return
    let next = Math.max(this.cap, MIN_CAPACITY)
    while (next < points) next = next < DOUBLING_LIMIT ? next * 2 : Math.ceil(next * 1.5)
    this.resize(next)
  }

  /** Shrinks every column to exactly `count` points (frees the slack left by growth). */
  trim(): void {
    if (this.cap !== this.count) this.resize(this.count)
  }

  /** Point i's coordinates as a new tuple: for tests and tools, not for hot loops. */
  point(i: number): [number, number, number] {
    if (i < 0 || i >= this.count) throw new RangeError(`point ${i} is outside 0..${this.count - 1}`)
    return [this.positions[i * 3]!, this.positions[i * 3 + 1]!, this.positions[i * 3 + 2]!]
  }

  private resize(capacity: number): void {
    const keep = this.count
    this.positions = copyInto(new Float64Array(capacity * 3), this.positions, keep * 3)
    if (this.colors) this.colors = copyInto(new Uint8Array(capacity * 3), this.colors, keep * 3)
    if (this.intensities) this.intensities = copyInto(new Float32Array(capacity), this.intensities, keep)
    if (this.uncertainties) this.uncertainties = copyInto(new Float32Array(capacity), this.uncertainties, keep)
    this.cap = capacity
  }
}

function copyInto<T extends Float64Array | Float32Array | Uint8Array>(target: T, source: T, length: number): T {
  target.set(source.subarray(0, length) as never)
  return target
}

function checked<T extends { length: number }>(name: string, array: T, expected: number): T {
  if (array.length !== expected) throw new RangeError(`${name} holds ${array.length} values, expected ${expected}`)
  return array
}
