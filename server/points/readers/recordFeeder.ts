import { errorAtByte } from './errors'

/**
 * Feeds binary records to a decoder straight from the pushed chunks. Only a record cut by a chunk
 * boundary is assembled in a small carry buffer (at most one record long, or up to `maxRecordLength`
 * for records whose length depends on their content, such as PLY lists).
 */

/** Decodes `count` records that start at `offset` in `view`, each `stride` bytes (fixed records). */
export type RecordDecoder = (view: DataView, offset: number, count: number) => void

/**
 * Length of the record that starts at `offset`, or -1 when bytes up to `end` do not hold all of it.
 * For fixed records this is just the record length.
 */
export type RecordMeasure = (view: DataView, offset: number, end: number) => number

export class RecordFeeder {
  /** Records decoded so far. */
  done = 0
  private carry: Uint8Array
  private carryView: DataView
  private carryLength = 0
  private carryFileOffset = 0
  private chunkFileOffset = 0

  /**
   * @param total records to read before the feeder reports itself full
   * @param fixedLength the record length, or 0 when `measure` decides per record
   */
  constructor(
    readonly total: number,
    readonly fixedLength: number,
    private readonly decode: RecordDecoder,
    private readonly measure: RecordMeasure | null = null,
    private readonly maxRecordLength = 1 << 20,
  ) {
    this.carry = new Uint8Array(Math.max(fixedLength, 64))
    this.carryView = new DataView(this.carry.buffer)
  }

  get finished(): boolean {
    return this.done >= this.total
  }

  /** Bytes of a record cut short at the end of the last chunk. */
  get pending(): number {
    return this.carryLength
  }

  /**
   * Consumes bytes [start, end) of `chunk` (seen through `view`) until all records are read.
   * `fileOffset` is the file offset of chunk[0], for error messages. Returns the position after the last
   * byte consumed.
   */
  feed(chunk: Uint8Array, view: DataView, start: number, end: number, fileOffset: number): number {
    this.chunkFileOffset = fileOffset
    let pos = start
    if (this.carryLength > 0) {
      pos = this.completeCarried(chunk, pos, end)
      if (this.carryLength > 0) return pos
    }
    if (this.fixedLength > 0) {
      const length = this.fixedLength
      const whole = Math.min(Math.floor((end - pos) / length), this.total - this.done)
      if (whole > 0) {
        this.decode(view, pos, whole)
        this.done += whole
        pos += whole * length
      }
    } else {
      const measure = this.measure as RecordMeasure
      while (this.done < this.total && pos < end) {
        const length = measure(view, pos, end)
        if (length < 0) break
        this.decode(view, pos, 1)
        this.done++
        pos += length
      }
    }
    if (this.done < this.total && pos < end) {
      this.stash(chunk, pos, end)
      pos = end
    }
    return pos
  }

  /** Adds bytes to the carried partial record until it is whole; returns the new chunk position. */
  private completeCarried(chunk: Uint8Array, pos: number, end: number): number {
    if (this.fixedLength > 0) {
      const take = Math.min(this.fixedLength - this.carryLength, end - pos)
      this.carry.set(chunk.subarray(pos, pos + take), this.carryLength)
      this.carryLength += take
      pos += take
      if (this.carryLength === this.fixedLength) {
        this.decode(this.carryView, 0, 1)
        this.done++
        this.carryLength = 0
      }
      return pos
    }
    const measure = this.measure as RecordMeasure
    while (pos < end) {
      // Take a slice, see whether the record is now whole, and give back what belongs to the next one.
      const take = Math.min(end - pos, Math.max(64, this.carry.length - this.carryLength))
      this.ensureCarry(this.carryLength + take)
      this.carry.set(chunk.subarray(pos, pos + take), this.carryLength)
      const available = this.carryLength + take
      const length = measure(this.carryView, 0, available)
      if (length < 0) {
        this.carryLength = available
        pos += take
        continue
      }
      this.decode(this.carryView, 0, 1)
      this.done++
      pos += length - this.carryLength
      this.carryLength = 0
      return pos
    }
    return pos
  }

  private stash(chunk: Uint8Array, pos: number, end: number): void {
    this.carryFileOffset = this.chunkFileOffset + pos
    this.ensureCarry(end - pos)
    this.carry.set(chunk.subarray(pos, end), 0)
    this.carryLength = end - pos
  }

  private ensureCarry(size: number): void {
    if (size <= this.carry.length) return
    if (size > this.maxRecordLength) {
      throw errorAtByte(
        this.carryFileOffset,
        `record ${this.done + 1} of ${this.total} is longer than ${this.maxRecordLength} bytes`,
      )
    }
    const grown = new Uint8Array(Math.min(Math.max(size, this.carry.length * 2), this.maxRecordLength))
    grown.set(this.carry.subarray(0, this.carryLength))
    this.carry = grown
    this.carryView = new DataView(grown.buffer)
  }
}

/**
 * Index of the first byte in chunk[start..] that is not ASCII whitespace, or -1. Bytes after the last
 * declared record are tolerated only as whitespace (a trailing newline some writers add).
 */
export function firstNonBlank(chunk: Uint8Array, start: number): number {
  for (let i = start; i < chunk.length; i++) {
    const c = chunk[i] as number
    if (c !== 10 && c !== 13 && c !== 32 && c !== 9) return i
  }
  return -1
}
