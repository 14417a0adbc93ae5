import { ChunkedSink, ExportError, type ByteSink, type ExportBatch } from './sink'

/**
 * Writes binary little-endian PLY (Turk 1994): a `vertex` element with float64 x y z and optional uchar
 * red green blue and float32 intensity. Used by the demo generator and the benches.
 */
export interface PlyPoints {
  count: number
  positions: Float64Array
  colors?: Uint8Array
  intensities?: Float32Array
}

export function writeBinaryPly(points: PlyPoints, comments: string[] = []): Buffer {
  const { count, colors, intensities } = points
  const header = [
    'ply',
    'format binary_little_endian 1.0',
    ...comments.map((c) => `comment ${c}`),
    `element vertex ${count}`,
    'property double x',
    'property double y',
    'property double z',
    ...(colors ? ['property uchar red', 'property uchar green', 'property uchar blue'] : []),
    ...(intensities ? ['property float intensity'] : []),
    'end_header',
    '',
  ].join('\n')
  const stride = 24 + (colors ? 3 : 0) + (intensities ? 4 : 0)
  const head = Buffer.from(header, 'ascii')
  const out = Buffer.alloc(head.length + stride * count)
  head.copy(out)
  let o = head.length
  for (let i = 0; i < count; i++) {
    out.writeDoubleLE(points.positions[i * 3]!, o)
    out.writeDoubleLE(points.positions[i * 3 + 1]!, o + 8)
    out.writeDoubleLE(points.positions[i * 3 + 2]!, o + 16)
    o += 24
    if (colors) {
      out[o] = colors[i * 3]!
      out[o + 1] = colors[i * 3 + 1]!
      out[o + 2] = colors[i * 3 + 2]!
      o += 3
    }
    if (intensities) {
      out.writeFloatLE(intensities[i]!, o)
      o += 4
    }
  }
  return out
}

/**
 * Streaming binary little-endian PLY for exports: x y z as float where every coordinate is below
 * `PLY_FLOAT_LIMIT` in size (float32 keeps them within 2^-14 m, 61 um, of their value; 24 significant bits
 * below 1024 m), else double; then uchar red green blue and float intensity when the points carry them.
 * The count comes first in the header, so the caller counts the points before writing.
 */
export const PLY_FLOAT_LIMIT = 1024

export interface PlyPlan {
  count: number
  /** Largest |x|, |y| or |z| of the points as written. */
  maxAbs: number
  colors: boolean
  intensities: boolean
  comments?: string[]
}

export function plyUsesDouble(plan: Pick<PlyPlan, 'maxAbs'>): boolean {
  return !(plan.maxAbs < PLY_FLOAT_LIMIT)
}

export class PlyStreamWriter {
  private readonly out: ChunkedSink
  private readonly double: boolean
  private readonly stride: number
  private readonly records: Uint8Array
  private readonly view: DataView
  private written = 0

  constructor(
    sink: ByteSink,
    private readonly plan: PlyPlan,
  ) {
    this.out = new ChunkedSink(sink)
    this.double = plyUsesDouble(plan)
    this.stride = (this.double ? 24 : 12) + (plan.colors ? 3 : 0) + (plan.intensities ? 4 : 0)
    this.records = new Uint8Array(this.stride * 8192)
    this.view = new DataView(this.records.buffer)
  }

  async begin(): Promise<void> {
    const type = this.double ? 'double' : 'float'
    const header = [
      'ply',
      'format binary_little_endian 1.0',
      ...(this.plan.comments ?? []).map((c) => `comment ${c.replace(/[\r\n]+/g, ' ')}`),
      `element vertex ${this.plan.count}`,
      `property ${type} x`,
      `property ${type} y`,
      `property ${type} z`,
      ...(this.plan.colors ? ['property uchar red', 'property uchar green', 'property uchar blue'] : []),
      ...(this.plan.intensities ? ['property float intensity'] : []),
      'end_header',
      '',
    ].join('\n')
    await this.out.write(Buffer.from(header, 'ascii'))
  }

  async write(batch: ExportBatch): Promise<void> {
    if (this.written + batch.count > this.plan.count) throw new ExportError(`PLY export: more points arrived (${this.written + batch.count}) than were counted (${this.plan.count}); the scans changed while exporting`)
    const { positions, colors, intensities } = batch
    const perChunk = this.records.length / this.stride
    for (let start = 0; start < batch.count; start += perChunk) {
      const end = Math.min(batch.count, start + perChunk)
      let o = 0
      for (let i = start; i < end; i++) {
        if (this.double) {
          this.view.setFloat64(o, positions[i * 3]!, true)
          this.view.setFloat64(o + 8, positions[i * 3 + 1]!, true)
          this.view.setFloat64(o + 16, positions[i * 3 + 2]!, true)
          o += 24
        } else {
          this.view.setFloat32(o, positions[i * 3]!, true)
          this.view.setFloat32(o + 4, positions[i * 3 + 1]!, true)
          this.view.setFloat32(o + 8, positions[i * 3 + 2]!, true)
          o += 12
        }
        if (this.plan.colors) {
          this.records[o] = colors ? colors[i * 3]! : 0
          this.records[o + 1] = colors ? colors[i * 3 + 1]! : 0
          this.records[o + 2] = colors ? colors[i * 3 + 2]! : 0
          o += 3
        }
        if (this.plan.intensities) {
          this.view.setFloat32(o, intensities ? intensities[i]! : 0, true)
          o += 4
        }
      }
      await this.out.write(this.records.subarray(0, o))
    }
    this.written += batch.count
  }

  async end(): Promise<void> {
    if (this.written !== this.plan.count) throw new ExportError(`PLY export: ${this.written} points arrived, ${this.plan.count} were counted; the scans changed while exporting`)
    await this.out.flush()
  }
}
