import { errorAtByte, errorInHeader } from './errors'
import { LAS_MIN_HEADER, LAS_POINT_FORMATS, lasAllowsTrailingData, lasHeaderSize, parseLasHeader } from './lasHeader'
import { ReaderBase } from './readerBase'
import { RecordFeeder } from './recordFeeder'
import { lasColors, lasCoordinates } from './recordLoops'
import type { LasHeaderInfo, ReaderOptions } from './types'

/**
 * Uncompressed LAS 1.0-1.4, point formats 0-10 (ASPRS LAS 1.4 R15). Streams the records straight
 * from the chunks: X = X_record * scale + offset in double precision, intensity as the raw u16, RGB
 * (formats 2, 3, 7, 8; 16-bit by the specification) keeps its high byte. VLRs are skipped; EVLRs
 * (1.4) and waveform data after the points are allowed, other bytes after the last record are not.
 */

const SIGNATURE = [76, 65, 83, 70] // "LASF"

type Phase = 'header' | 'vlrs' | 'points' | 'after'

export class LasReader extends ReaderBase {
  readonly format = 'las' as const
  declare header: LasHeaderInfo | null
  private phase: Phase = 'header'
  private headerBytes = new Uint8Array(LAS_MIN_HEADER)
  private headerFilled = 0
  private feeder: RecordFeeder | null = null
  private colorOffset = -1
  private trailing = 0

  constructor(options: ReaderOptions) {
    super(options)
  }

  protected consume(chunk: Uint8Array, fileOffset: number): void {
    let pos = 0
    if (this.phase === 'header') {
      pos = this.fillHeader(chunk)
      if (this.phase === 'header') return
    }
    const header = this.header!
    if (this.phase === 'vlrs') {
      const skip = Math.min(chunk.length - pos, header.offsetToPoints - (fileOffset + pos))
      pos += skip
      if (fileOffset + pos < header.offsetToPoints) return
      this.phase = 'points'
    }
    if (this.phase === 'points') {
      const feeder = this.feeder!
      const view = new DataView(chunk.buffer, chunk.byteOffset, chunk.byteLength)
      pos = feeder.feed(chunk, view, pos, chunk.length, fileOffset)
      if (!feeder.finished) return
      this.phase = 'after'
    }
    this.trailing += chunk.length - pos
    if (this.trailing >= header.recordLength && !lasAllowsTrailingData(header)) {
      throw errorAtByte(
        header.offsetToPoints + header.pointCount * header.recordLength,
        `data continues after the ${header.pointCount} points declared in the header (the header's count disagrees with the body)`,
      )
    }
  }

  protected finish(): void {
    const header = this.header
    if (this.phase === 'header' || !header) {
      const size = this.headerFilled >= 96 ? lasHeaderSize(this.headerBytes) : LAS_MIN_HEADER
      throw errorAtByte(this.bytesSeen, `file ends inside the ${size}-byte LAS header`)
    }
    if (this.phase === 'vlrs') {
      throw errorAtByte(this.bytesSeen, `file ends before the points, which start at byte ${header.offsetToPoints}`)
    }
    const feeder = this.feeder!
    if (!feeder.finished) {
      throw errorAtByte(
        this.bytesSeen,
        feeder.pending > 0
          ? `file ends inside point ${feeder.done + 1} of ${header.pointCount} declared in the header`
          : `file ends after ${feeder.done} of ${header.pointCount} points declared in the header`,
      )
    }
  }

  /** Copies header bytes (227 first, then the size the header states); returns the chunk position. */
  private fillHeader(chunk: Uint8Array): number {
    let pos = 0
    while (pos < chunk.length) {
      const want = this.headerBytes.length - this.headerFilled
      const take = Math.min(want, chunk.length - pos)
      this.headerBytes.set(chunk.subarray(pos, pos + take), this.headerFilled)
      for (let i = this.headerFilled; i < Math.min(4, this.headerFilled + take); i++) {
        if (this.headerBytes[i] !== SIGNATURE[i]) {
          throw errorInHeader(`a LAS file starts with 'LASF'`, { field: 'file signature' })
        }
      }
      this.headerFilled += take
      pos += take
      if (this.headerFilled < this.headerBytes.length) return pos
      const size = lasHeaderSize(this.headerBytes)
      if (size > this.headerBytes.length) {
        const grown = new Uint8Array(size)
        grown.set(this.headerBytes)
        this.headerBytes = grown
        continue
      }
      this.startPoints(parseLasHeader(this.headerBytes, false))
      return pos
    }
    return pos
  }

  private startPoints(header: LasHeaderInfo): void {
    if (header.pointCount > this.maxPoints) {
      throw errorInHeader(`${header.pointCount} points, more than the ${this.maxPoints} this reader accepts`, {
        field: 'number of point records',
      })
    }
    if (header.pointCount === 0) {
      throw errorInHeader('0, so the file holds no points', { field: 'number of point records' })
    }
    const total = this.options.byteLength
    const needed = header.offsetToPoints + header.pointCount * header.recordLength
    if (total !== undefined && needed > total) {
      throw errorInHeader(
        `${header.pointCount} points of ${header.recordLength} bytes from byte ${header.offsetToPoints} need ${needed} bytes, the file holds ${total}`,
        { field: 'number of point records' },
      )
    }
    this.header = header
    this.colorOffset = (LAS_POINT_FORMATS[header.pointFormat] as { color: number }).color
    this.feeder = new RecordFeeder(header.pointCount, header.recordLength, this.decode)
    this.createSink({ color: this.colorOffset >= 0, intensity: true, uncertainty: false }, (index) => ({
      byte: header.offsetToPoints + index * header.recordLength,
    }))
    this.phase = header.offsetToPoints > this.headerBytes.length ? 'vlrs' : 'points'
  }

  private readonly decode = (view: DataView, offset: number, count: number): void => {
    const sink = this.sink!
    const header = this.header!
    const stride = header.recordLength
    let done = 0
    while (done < count) {
      const n = Math.min(sink.room, count - done)
      const first = offset + done * stride
      lasCoordinates(view, first, stride, n, header.scale, header.offset, sink.positions, sink.count * 3, sink.intensities!, sink.count)
      if (this.colorOffset >= 0) lasColors(view, first, stride, n, this.colorOffset, sink.colors!, sink.count * 3)
      sink.commit(n)
      done += n
    }
  }
}
