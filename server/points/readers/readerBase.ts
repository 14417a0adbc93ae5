import { ScanFormatError, errorAtByte, type ScanErrorLocation } from './errors'
import { PointSink, type SinkLayout } from './pointSink'
import type {
  DropReason,
  PointReader,
  ReadSummary,
  ReaderOptions,
  ScanFormat,
  ScanHeaderInfo,
} from './types'

export const DEFAULT_MAX_POINTS = 2e9

/**
 * What every reader shares: the failed state, byte accounting, the point sink and the end-of-file checks.
 * Subclasses implement consume() (one chunk, with its file offset) and finish() (the file has ended).
 */
export abstract class ReaderBase implements PointReader {
  abstract readonly format: ScanFormat
  header: ScanHeaderInfo | null = null
  readonly dropped: Partial<Record<DropReason, number>> = {}
  protected sink: PointSink | null = null
  /** File offset of the next byte to arrive. */
  protected bytesSeen = 0
  protected readonly maxPoints: number
  private failure: ScanFormatError | null = null
  private ended = false

  constructor(protected readonly options: ReaderOptions) {
    this.maxPoints = options.maxPoints ?? DEFAULT_MAX_POINTS
  }

  get pointCount(): number {
    return this.sink ? this.sink.delivered : 0
  }

  push(chunk: Uint8Array): void {
    if (this.failure) throw this.failure
    if (this.ended) throw new Error('push() after end()')
    if (chunk.length === 0) return
    const offset = this.bytesSeen
    this.bytesSeen += chunk.length
    try {
      this.consume(chunk, offset)
    } catch (error) {
      throw this.fail(error)
    }
  }

  async end(): Promise<ReadSummary> {
    if (this.failure) throw this.failure
    if (this.ended) throw new Error('end() called twice')
    this.ended = true
    try {
      if (this.bytesSeen === 0) throw errorAtByte(0, 'the file is empty')
      await this.finish()
      const sink = this.sink
      if (sink) sink.flush()
      if (!sink || !this.header || sink.delivered === 0) {
        const where = this.endLocation()
        const prefix = where.line !== undefined ? `line ${where.line}` : `byte ${where.byte ?? this.bytesSeen}`
        throw new ScanFormatError(`${prefix}: the file holds no points${this.noPointsDetail()}`, where)
      }
      return {
        format: this.format,
        header: this.header,
        pointCount: sink.delivered,
        bounds: sink.bounds(),
        dropped: { ...this.dropped },
      }
    } catch (error) {
      throw this.fail(error)
    }
  }

  protected abstract consume(chunk: Uint8Array, fileOffset: number): void
  protected abstract finish(): void | Promise<void>

  /** Where "the file holds no points" is reported. */
  protected endLocation(): ScanErrorLocation {
    return { byte: this.bytesSeen }
  }

  protected noPointsDetail(): string {
    return ''
  }

  protected createSink(layout: SinkLayout, locate: (pointIndex: number) => ScanErrorLocation): PointSink {
    this.sink = new PointSink(this.options, layout, locate)
    return this.sink
  }

  protected countDrop(reason: DropReason): void {
    this.dropped[reason] = (this.dropped[reason] ?? 0) + 1
  }

  /** Errors of the consumer's own callback pass through; anything else unexpected becomes a ScanFormatError. */
  private fail(error: unknown): unknown {
    if (this.sink?.inCallback) {
      this.sink.inCallback = false
      return error
    }
    if (error instanceof ScanFormatError) {
      this.failure = error
      return error
    }
    const detail = error instanceof Error ? error.message : String(error)
    const wrapped = errorAtByte(this.bytesSeen, `the file could not be read (${detail})`)
    wrapped.cause = error
    this.failure = wrapped
    return wrapped
  }
}
