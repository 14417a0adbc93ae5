import { ChunkedSink, ExportError, type ByteSink, type ExportBatch } from './sink'

/**
 * LAS 1.4 writer (ASPRS LAS Specification 1.4 R15). Streams point data record format 6 (30 bytes) or, with
 * colour, 7 (36 bytes) after a 375-byte public header and no VLRs. The header needs the count and the bounds
 * before the first point, so the caller measures them first (a pass over the points) and gives them here.
 *
 * Header (R15 Table 3), little-endian: 'LASF', file source id u16, global encoding u16 (0: no WKT VLR is
 * written, so the WKT bit stays clear), project GUID 16 bytes, version 1.4, system identifier and generating
 * software 32 bytes each, creation day of year and year u16, header size u16 375, offset to point data u32,
 * VLR count u32, point data record format u8, record length u16, legacy point count u32 and legacy counts
 * by return 5 x u32 (0 for formats 6-10), scale x y z f64, offset x y z f64, max x, min x, max y, min y,
 * max z, min z f64, start of waveform data u64, start of first EVLR u64, EVLR count u32, point count u64,
 * counts by return 15 x u64.
 *
 * Records (Tables 13, 14): X Y Z i32 (X = round((x - offset) / scale)), intensity u16, return number (bits
 * 0-3) and number of returns (bits 4-7) u8, flags u8, classification u8, user data u8, scan angle i16,
 * point source id u16, GPS time f64; format 7 adds red, green, blue u16. Every point is written as return 1
 * of 1 (Spanmark keeps no returns), classification 0 (never classified), colour scaled from 8 to 16 bits
 * (c x 257, so the high byte is the colour again), intensity rounded and clamped to u16 (or first stretched
 * from its range onto 0-65535 where it is not whole numbers in that range: `intensityRange`).
 */

export const LAS_HEADER_SIZE = 375
const INT32_MAX = 2 ** 31 - 1

export interface LasPlan {
  count: number
  /** True bounds of the points as they will be written (the export frame), metres. */
  min: [number, number, number]
  max: [number, number, number]
  colors: boolean
  intensities: boolean
  /**
   * Where the intensities are not whole numbers within 0-65535 (a float intensity from PLY, say), the range
   * to stretch linearly onto 0-65535, as R15 asks of intensity (normalised to 16 bits). Without it values
   * are rounded and clamped.
   */
  intensityRange?: [number, number]
  created?: Date
  /** Up to 32 ASCII characters. */
  software?: string
}

/**
 * Scale and offset per axis: the offset at the bounds' centre and the finest scale of 0.1 mm or 1 mm that
 * keeps every coordinate within int32 (round((x - offset) / scale) of the far bound at most 2^31 - 1), so
 * every point is stored within half the scale of where it is. A spread no millimetre scale can hold is
 * refused naming the axis and its extent.
 */
export const LAS_SCALES = [0.0001, 0.001] as const

export function lasScaleOffset(min: readonly number[], max: readonly number[]): { scale: [number, number, number]; offset: [number, number, number] } {
  const scale: number[] = []
  const offset: number[] = []
  for (let a = 0; a < 3; a++) {
    const lo = min[a]!
    const hi = max[a]!
    if (!Number.isFinite(lo) || !Number.isFinite(hi)) throw new ExportError(`LAS export: the ${'xyz'[a]} bounds are not finite numbers`)
    const centre = (lo + hi) / 2
    const half = Math.max(hi - centre, centre - lo)
    const fit = LAS_SCALES.find((s) => Math.round(half / s) + 1 <= INT32_MAX)
    if (fit === undefined) {
      const extent = hi - lo
      throw new ExportError(
        `LAS export: the points spread ${formatMetres(extent)} along ${'xyz'[a]} (from ${lo.toFixed(3)} to ${hi.toFixed(3)} m); ` +
          `LAS stores coordinates as 32-bit integers, which at a 1 mm scale reach at most ${formatMetres((2 * INT32_MAX) / 1000)}. ` +
          `Export the placements apart, or choose E57 or PLY.`,
      )
    }
    scale.push(fit)
    offset.push(centre)
  }
  return { scale: scale as [number, number, number], offset: offset as [number, number, number] }
}

function formatMetres(m: number): string {
  return m >= 10_000 ? `${(m / 1000).toFixed(1)} km` : `${m.toFixed(3)} m`
}

const quantise = (v: number, scale: number, offset: number) => Math.round((v - offset) / scale)

export function lasHeader(plan: LasPlan, scale: readonly number[], offset: readonly number[]): Uint8Array {
  const h = new Uint8Array(LAS_HEADER_SIZE)
  const v = new DataView(h.buffer)
  const ascii = (at: number, text: string, size: number) => {
    for (let i = 0; i < Math.min(size, text.length); i++) h[at + i] = text.charCodeAt(i) & 0x7f
  }
  const format = plan.colors ? 7 : 6
  const created = plan.created ?? new Date()
  const dayOfYear = Math.floor((Date.UTC(created.getUTCFullYear(), created.getUTCMonth(), created.getUTCDate()) - Date.UTC(created.getUTCFullYear(), 0, 1)) / 86_400_000) + 1
  ascii(0, 'LASF', 4)
  h[24] = 1
  h[25] = 4
  ascii(26, 'OTHER', 32)
  ascii(58, plan.software ?? 'Spanmark export', 32)
  v.setUint16(90, dayOfYear, true)
  v.setUint16(92, created.getUTCFullYear(), true)
  v.setUint16(94, LAS_HEADER_SIZE, true)
  v.setUint32(96, LAS_HEADER_SIZE, true)
  v.setUint32(100, 0, true)
  h[104] = format
  v.setUint16(105, format === 7 ? 36 : 30, true)
  // 107..130: legacy counts stay 0 for formats 6-10.
  for (let a = 0; a < 3; a++) {
    v.setFloat64(131 + 8 * a, scale[a]!, true)
    v.setFloat64(155 + 8 * a, offset[a]!, true)
    // The bounds of the stored (quantised) coordinates: rounding is monotone, so these are the bounds of
    // what a reader gets back.
    const hi = quantise(plan.max[a]!, scale[a]!, offset[a]!) * scale[a]! + offset[a]!
    const lo = quantise(plan.min[a]!, scale[a]!, offset[a]!) * scale[a]! + offset[a]!
    v.setFloat64(179 + 16 * a, plan.count ? hi : 0, true)
    v.setFloat64(187 + 16 * a, plan.count ? lo : 0, true)
  }
  v.setBigUint64(247, BigInt(plan.count), true)
  v.setBigUint64(255, BigInt(plan.count), true) // every point is return 1
  return h
}

export class LasWriter {
  private readonly out: ChunkedSink
  private readonly scale: [number, number, number]
  private readonly offset: [number, number, number]
  private readonly recordLength: number
  private readonly records: Uint8Array
  private readonly view: DataView
  private written = 0

  constructor(
    sink: ByteSink,
    private readonly plan: LasPlan,
  ) {
    this.out = new ChunkedSink(sink)
    ;({ scale: this.scale, offset: this.offset } = lasScaleOffset(plan.min, plan.max))
    this.recordLength = plan.colors ? 36 : 30
    this.records = new Uint8Array(this.recordLength * 8192)
    this.view = new DataView(this.records.buffer)
  }

  get scaleAndOffset() {
    return { scale: this.scale, offset: this.offset }
  }

  async begin(): Promise<void> {
    await this.out.write(lasHeader(this.plan, this.scale, this.offset))
  }

  async write(batch: ExportBatch): Promise<void> {
    if (this.written + batch.count > this.plan.count) throw new ExportError(`LAS export: more points arrived (${this.written + batch.count}) than were counted (${this.plan.count}); the scans changed while exporting`)
    const { positions, colors, intensities } = batch
    const [sx, sy, sz] = this.scale
    const [ox, oy, oz] = this.offset
    const size = this.recordLength
    const range = this.plan.intensityRange
    const span = range && range[1] > range[0] ? range[1] - range[0] : 1
    const perChunk = this.records.length / size
    for (let start = 0; start < batch.count; start += perChunk) {
      const end = Math.min(batch.count, start + perChunk)
      this.records.fill(0)
      for (let i = start, o = 0; i < end; i++, o += size) {
        this.view.setInt32(o, Math.round((positions[i * 3]! - ox) / sx), true)
        this.view.setInt32(o + 4, Math.round((positions[i * 3 + 1]! - oy) / sy), true)
        this.view.setInt32(o + 8, Math.round((positions[i * 3 + 2]! - oz) / sz), true)
        if (this.plan.intensities && intensities) {
          const value = range ? ((intensities[i]! - range[0]) / span) * 65535 : intensities[i]!
          this.view.setUint16(o + 12, Number.isFinite(value) ? Math.min(65535, Math.max(0, Math.round(value))) : 0, true)
        }
        this.records[o + 14] = 0x11 // return 1 of 1
        if (this.plan.colors && colors) {
          this.view.setUint16(o + 30, colors[i * 3]! * 257, true)
          this.view.setUint16(o + 32, colors[i * 3 + 1]! * 257, true)
          this.view.setUint16(o + 34, colors[i * 3 + 2]! * 257, true)
        }
      }
      await this.out.write(this.records.subarray(0, (end - start) * size))
    }
    this.written += batch.count
  }

  async end(): Promise<void> {
    if (this.written !== this.plan.count) throw new ExportError(`LAS export: ${this.written} points arrived, ${this.plan.count} were counted; the scans changed while exporting`)
    await this.out.flush()
  }
}
