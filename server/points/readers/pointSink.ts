import { ScanFormatError, type ScanErrorLocation } from './errors'
import type { Bounds, PointBatch, ReaderOptions } from './types'

export interface SinkLayout {
  color: boolean
  intensity: boolean
  uncertainty: boolean
  /** Row and column of a gridded scan (E57). */
  grid?: boolean
}

export const DEFAULT_BATCH_SIZE = 65536

const AXES = ['x', 'y', 'z'] as const

/**
 * Collects decoded points into batches. Readers write straight into `positions`, `colors`, ... from
 * index `count` up to `capacity`, then call commit(n). On each flush the batch is checked for non-finite
 * coordinates (the error names the point, 1-based, and where it is through `locate`) and folded into the
 * bounds, so readers keep their hot loops free of checks.
 */
export class PointSink {
  readonly capacity: number
  positions: Float64Array
  colors: Uint8Array | null
  intensities: Float32Array | null
  uncertainties: Float32Array | null
  rows: Int32Array | null
  columns: Int32Array | null
  /** Points in the batch being filled. */
  count = 0
  /** Points already delivered. */
  delivered = 0
  /** Set while the consumer's callback runs, so that its own errors pass through untouched. */
  inCallback = false
  private readonly onBatch: ReaderOptions['onBatch']
  private readonly reuse: boolean
  private readonly layout: SinkLayout
  /** min x y z, max x y z */
  private readonly extent = Float64Array.of(Infinity, Infinity, Infinity, -Infinity, -Infinity, -Infinity)

  constructor(
    options: ReaderOptions,
    layout: SinkLayout,
    private readonly locate: (pointIndex: number) => ScanErrorLocation,
  ) {
    const size = Math.floor(options.batchSize ?? DEFAULT_BATCH_SIZE)
    this.capacity = size >= 1 ? size : DEFAULT_BATCH_SIZE
    this.onBatch = options.onBatch
    this.reuse = options.reuseBuffers === true
    this.layout = layout
    this.positions = new Float64Array(this.capacity * 3)
    this.colors = layout.color ? new Uint8Array(this.capacity * 3) : null
    this.intensities = layout.intensity ? new Float32Array(this.capacity) : null
    this.uncertainties = layout.uncertainty ? new Float32Array(this.capacity) : null
    this.rows = layout.grid ? new Int32Array(this.capacity) : null
    this.columns = layout.grid ? new Int32Array(this.capacity) : null
  }

  get room(): number {
    return this.capacity - this.count
  }

  get total(): number {
    return this.delivered + this.count
  }

  commit(n: number): void {
    this.count += n
    if (this.count >= this.capacity) this.flush()
  }

  flush(): void {
    const n = this.count
    if (n === 0) return
    this.scan(n)
    const whole = n === this.capacity
    const batch: PointBatch = {
      count: n,
      positions: whole ? this.positions : this.positions.subarray(0, n * 3),
    }
    if (this.colors) batch.colors = whole ? this.colors : this.colors.subarray(0, n * 3)
    if (this.intensities) batch.intensities = whole ? this.intensities : this.intensities.subarray(0, n)
    if (this.uncertainties) batch.uncertainties = whole ? this.uncertainties : this.uncertainties.subarray(0, n)
    if (this.rows && this.columns) {
      batch.rows = whole ? this.rows : this.rows.subarray(0, n)
      batch.columns = whole ? this.columns : this.columns.subarray(0, n)
    }
    this.delivered += n
    this.count = 0
    if (!this.reuse) this.allocate()
    this.inCallback = true
    this.onBatch(batch)
    this.inCallback = false
  }

  bounds(): Bounds {
    const e = this.extent
    return { min: [e[0] as number, e[1] as number, e[2] as number], max: [e[3] as number, e[4] as number, e[5] as number] }
  }

  private allocate(): void {
    this.positions = new Float64Array(this.capacity * 3)
    if (this.layout.color) this.colors = new Uint8Array(this.capacity * 3)
    if (this.layout.intensity) this.intensities = new Float32Array(this.capacity)
    if (this.layout.uncertainty) this.uncertainties = new Float32Array(this.capacity)
    if (this.layout.grid) {
      this.rows = new Int32Array(this.capacity)
      this.columns = new Int32Array(this.capacity)
    }
  }

  private scan(n: number): void {
    const bad = scanBatch(this.positions, n, this.extent)
    if (bad >= 0) this.failNonFinite(bad, bad * 3)
  }

  private failNonFinite(i: number, j: number): never {
    const index = this.delivered + i
    let axis = 0
    while (axis < 2 && Number.isFinite(this.positions[j + axis])) axis++
    const value = this.positions[j + axis]
    const where = this.locate(index)
    const prefix = where.line !== undefined ? `line ${where.line}` : `byte ${where.byte ?? 0}`
    throw new ScanFormatError(
      `${prefix}: point ${index + 1} has a coordinate that is not a finite number (${AXES[axis]} = ${value})`,
      where,
    )
  }
}

/**
 * Folds n points into `extent` (min x y z, max x y z) and returns the index of the first point with a
 * coordinate that is not finite, or -1. A small top-level loop, optimised early.
 */
function scanBatch(p: Float64Array, n: number, extent: Float64Array): number {
  let x0 = extent[0] as number
  let y0 = extent[1] as number
  let z0 = extent[2] as number
  let x1 = extent[3] as number
  let y1 = extent[4] as number
  let z1 = extent[5] as number
  let bad = -1
  for (let i = 0, j = 0; i < n; i++, j += 3) {
    const x = p[j] as number
    const y = p[j + 1] as number
    const z = p[j + 2] as number
    // v - v is 0 for every finite v, NaN for NaN and for either infinity.
    if (x - x !== 0 || y - y !== 0 || z - z !== 0) {
      bad = i
      break
    }
    if (x < x0) x0 = x
    if (x > x1) x1 = x
    if (y < y0) y0 = y
    if (y > y1) y1 = y
    if (z < z0) z0 = z
    if (z > z1) z1 = z
  }
  extent[0] = x0
  extent[1] = y0
  extent[2] = z0
  extent[3] = x1
  extent[4] = y1
  extent[5] = z1
  return bad
}
