import { ScanFormatError, errorAtByte, errorInHeader } from './errors'
import { LAS_MIN_HEADER, lasHeaderSize, parseLasHeader } from './lasHeader'
import type { DecodedLaz } from './lazDecoder'
import { ReaderBase } from './readerBase'
import type { LasHeaderInfo, ReaderOptions } from './types'

export const DEFAULT_MAX_LAZ_BYTES = 256 * 1024 * 1024
export const DEFAULT_MAX_LAZ_POINTS = 25_000_000

/**
 * LAZ: the chunks are collected (up to a size cap), the header is checked as soon as it is in, and the
 * whole file is decompressed at end() by @loaders.gl/las (see lazDecoder.ts). The decoded points are
 * then handed out in batches like every other reader's.
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
    let decoded: DecodedLaz
    try {
      // Loaded on first use: servers that never see a LAZ file never load the decoder.
      const { decodeLaz } = await import('./lazDecoder')
      decoded = await decodeLaz(file)
    } catch (error) {
      if (error instanceof ScanFormatError) throw error
      const detail = error instanceof Error ? error.message : String(error)
      throw errorAtByte(
        header.offsetToPoints,
        `the compressed points could not be decoded: the LAZ data is damaged (the decoder said: ${detail})`,
      )
    }
    if (decoded.count !== header.pointCount) {
      throw errorAtByte(
        header.offsetToPoints,
        `the decoder found ${decoded.count} points, the header declares ${header.pointCount}`,
      )
    }
    this.emit(decoded)
  }

  private emit(decoded: DecodedLaz): void {
    const sink = this.sink!
    let done = 0
    while (done < decoded.count) {
      const n = Math.min(sink.room, decoded.count - done)
      sink.positions.set(decoded.positions.subarray(done * 3, (done + n) * 3), sink.count * 3)
      if (sink.colors && decoded.colors) {
        const c = sink.colors
        const source = decoded.colors
        for (let i = 0, w = sink.count * 3, r = done * 4; i < n; i++, w += 3, r += 4) {
          c[w] = source[r] as number
          c[w + 1] = source[r + 1] as number
          c[w + 2] = source[r + 2] as number
        }
      }
      if (sink.intensities && decoded.intensities) {
        const values = sink.intensities
        const source = decoded.intensities
        for (let i = 0, w = sink.count, r = done; i < n; i++) values[w + i] = source[r + i] as number
      }
      sink.commit(n)
      done += n
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
      throw errorInHeader(
        `${header.pointCount} points, more than the ${limit} a LAZ file may hold here (it is decompressed whole in memory)`,
        { field: 'number of point records' },
      )
    }
    if (header.pointCount === 0) {
      throw errorInHeader('0, so the file holds no points', { field: 'number of point records' })
    }
    this.header = header
    const colored = header.hasColor
    this.createSink({ color: colored, intensity: true, uncertainty: false }, () => ({ byte: header.offsetToPoints }))
  }

  private tooLarge(at: number): ScanFormatError {
    const mib = this.maxBytes / (1024 * 1024)
    const limit = Number.isInteger(mib) ? `${mib} MiB` : `${this.maxBytes}-byte`
    return errorAtByte(
      at,
      `LAZ files are decompressed whole in memory and this one is larger than the ${limit} limit (convert it to LAS, or split it)`,
    )
  }
}
