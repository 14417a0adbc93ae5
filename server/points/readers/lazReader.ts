import { ScanFormatError, errorAtByte, errorInHeader } from './errors'
import { LAS_MIN_HEADER, LAS_POINT_FORMATS, lasHeaderSize, parseLasHeader } from './lasHeader'
import type { LazRecords } from './lazDecoder'
import { ReaderBase } from './readerBase'
import { lasColors, lasCoordinates } from './recordLoops'
import type { LasHeaderInfo, ReaderOptions } from './types'

export const DEFAULT_MAX_LAZ_BYTES = 256 * 1024 * 1024
/** No cap of its own since the points are decoded a batch at a time (the reader's maxPoints still holds). */
export const DEFAULT_MAX_LAZ_POINTS = Number.POSITIVE_INFINITY

/**
 * LAZ: the compressed file is collected (up to a size cap), the header is checked as soon as it is in,
 * and at end() laz-rs (lazDecoder.ts) decompresses it a batch of records at a time, each batch decoded
 * like LAS records (formats 0-10) and handed out: the decoded points are never all in memory.
 */
export class LazReader extends ReaderBase {
  readonly format = 'laz' as const
  declare header: LasHeaderInfo | null
  private buffer: Uint8Array
  private length = 0
  private readonly maxBytes: number
  private readonly maxLazPoints: number

  constructor(options: ReaderOptions) {
    super(options)
    this.maxBytes = options.maxLazBytes ?? DEFAULT_MAX_LAZ_BYTES
    this.maxLazPoints = options.maxLazPoints ?? DEFAULT_MAX_LAZ_POINTS
    const known = options.byteLength
    if (known !== undefined && known > this.maxBytes) throw this.tooLarge(0)
    this.buffer = new Uint8Array(known !== undefined && known > 0 ? known : 1 << 20)
  }

  protected consume(chunk: Uint8Array, fileOffset: number): void {
    const needed = this.length + chunk.length
    if (needed > this.maxBytes) throw this.tooLarge(fileOffset)
    if (needed > this.buffer.length) {
      const grown = new Uint8Array(Math.min(Math.max(needed, this.buffer.length * 2), this.maxBytes))
      grown.set(this.buffer.subarray(0, this.length))
      this.buffer = grown
    }
    this.buffer.set(chunk, this.length)
    this.length = needed
    if (!this.header) this.tryHeader()
  }

  protected async finish(): Promise<void> {
    if (!this.header) {
      this.tryHeader()
      if (!this.header) {
        const size = this.length >= 96 ? lasHeaderSize(this.buffer) : LAS_MIN_HEADER
        throw errorAtByte(this.length, `file ends inside the ${size}-byte LAS header`)
      }
    }
    const header = this.header
    if (this.length <= header.offsetToPoints) {
      throw errorAtByte(this.length, `file ends before the points, which start at byte ${header.offsetToPoints}`)
    }
    // LAZ point data starts with the int64 offset of its chunk table, which LASzip writes at the end:
    // a file cut short loses it, and the decoder's own message would not say so.
    const view = new DataView(this.buffer.buffer, this.buffer.byteOffset, this.length)
    if (header.offsetToPoints + 8 <= this.length) {
      const table = Number(view.getBigInt64(header.offsetToPoints, true))
      if (table >= this.length) {
        throw errorAtByte(this.length, `file ends before the LAZ chunk table at byte ${table}: the file is cut short`)
      }
    }
    const file =
      this.length === this.buffer.buffer.byteLength && this.buffer.byteOffset === 0
        ? (this.buffer.buffer as ArrayBuffer)
        : (this.buffer.buffer.slice(this.buffer.byteOffset, this.buffer.byteOffset + this.length) as ArrayBuffer)
    this.buffer = new Uint8Array(0)
    let records: LazRecords
    let done = 0
    const damaged = (error: unknown): unknown => {
      if (error instanceof ScanFormatError || this.sink?.inCallback) return error
      const detail = error instanceof Error ? error.message : String(error)
      return errorAtByte(
        header.offsetToPoints,
        `the compressed points could not be decoded: the LAZ data is damaged (it stopped after ${done} of ${header.pointCount} points; the decoder said: ${detail})`,
      )
    }
    try {
      // Loaded on first use: servers that never see a LAZ file never load the decoder.
      const { LazRecords } = await import('./lazDecoder')
      records = await LazRecords.open(new Uint8Array(file))
    } catch (error) {
      throw damaged(error)
    }
    try {
      const sink = this.sink!
      const stride = header.recordLength
      const color = (LAS_POINT_FORMATS[header.pointFormat] as { color: number }).color
      const out = new Uint8Array(Math.min(sink.room || 1, header.pointCount) * stride)
      const view = new DataView(out.buffer)
      while (done < header.pointCount) {
        const n = Math.min(sink.room, header.pointCount - done)
        const part = n * stride === out.length ? out : out.subarray(0, n * stride)
        try {
          records.next(part)
        } catch (error) {
          throw damaged(error)
        }
        lasCoordinates(view, 0, stride, n, header.scale, header.offset, sink.positions, sink.count * 3, sink.intensities!, sink.count)
        if (color >= 0) lasColors(view, 0, stride, n, color, sink.colors!, sink.count * 3)
        done += n
        sink.commit(n)
      }
    } finally {
      records.close()
    }
  }

  private tryHeader(): void {
    if (this.length < 4) {
      for (let i = 0; i < this.length; i++) {
        if (this.buffer[i] !== 'LASF'.charCodeAt(i)) throw errorInHeader(`a LAZ file starts with 'LASF'`, { field: 'file signature' })
      }
      return
    }
    if (this.length < LAS_MIN_HEADER || this.length < lasHeaderSize(this.buffer)) {
      if (this.buffer[0] !== 76 || this.buffer[1] !== 65 || this.buffer[2] !== 83 || this.buffer[3] !== 70) {
        throw errorInHeader(`a LAZ file starts with 'LASF'`, { field: 'file signature' })
      }
      return
    }
    const header = parseLasHeader(this.buffer.subarray(0, this.length), true)
    const limit = Math.min(this.maxPoints, this.maxLazPoints)
    if (header.pointCount > limit) {
      throw errorInHeader(`${header.pointCount} points, more than the ${limit} a LAZ file may hold here`, {
        field: 'number of point records',
      })
    }
    if (header.pointCount === 0) {
      throw errorInHeader('0, so the file holds no points', { field: 'number of point records' })
    }
    this.header = header
    const colored = (LAS_POINT_FORMATS[header.pointFormat] as { color: number }).color >= 0
    this.createSink({ color: colored, intensity: true, uncertainty: false }, () => ({ byte: header.offsetToPoints }))
  }

  private tooLarge(at: number): ScanFormatError {
    const mib = this.maxBytes / (1024 * 1024)
    const limit = Number.isInteger(mib) ? `${mib} MiB` : `${this.maxBytes}-byte`
    return errorAtByte(
      at,
      `LAZ files are held whole in memory while decoded and this one is larger than the ${limit} limit (convert it to LAS, or split it)`,
    )
  }
}
