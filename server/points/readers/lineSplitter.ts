import { errorAtLine } from './errors'

/** Receives one line: bytes [start, end) of `bytes`, without its '\n' or a trailing '\r'. */
export type LineHandler = (bytes: Uint8Array, start: number, end: number, line: number) => void

const LF = 10
const CR = 13

export const DEFAULT_MAX_LINE = 1 << 16

/**
 * Splits a byte stream into lines without decoding it to strings. A line cut by a chunk boundary is
 * copied into a small carry buffer (bounded by maxLineLength); all other lines are handed out as views
 * into the chunk itself, valid during the call only.
 */
export class LineSplitter {
  /** Number of the last line handed out (1-based; starts at `firstLine - 1`). */
  line: number
  private carry = new Uint8Array(256)
  private carryLength = 0
  /** Bytes seen so far, for the caller's byte offsets. */
  bytesSeen = 0

  constructor(
    private readonly onLine: LineHandler,
    firstLine = 1,
    private readonly maxLineLength = DEFAULT_MAX_LINE,
  ) {
    this.line = firstLine - 1
  }

  push(chunk: Uint8Array, start = 0, end = chunk.length): void {
    let pos = start
    this.bytesSeen += end - start
    if (this.carryLength > 0) {
      const newline = chunk.indexOf(LF, pos)
      if (newline < 0 || newline >= end) {
        this.append(chunk, pos, end)
        return
      }
      this.append(chunk, pos, newline)
      pos = newline + 1
      const length = this.carryLength
      this.carryLength = 0
      this.deliver(this.carry, 0, length)
    }
    while (pos < end) {
      const newline = chunk.indexOf(LF, pos)
      if (newline < 0 || newline >= end) {
        this.append(chunk, pos, end)
        return
      }
      this.deliver(chunk, pos, newline)
      pos = newline + 1
    }
  }

  /** Hands out a last line that has no line break after it. */
  end(): void {
    if (this.carryLength > 0) {
      const length = this.carryLength
      this.carryLength = 0
      this.deliver(this.carry, 0, length)
    }
  }

  private deliver(bytes: Uint8Array, start: number, end: number): void {
    this.line++
    if (end > start && bytes[end - 1] === CR) end--
    this.onLine(bytes, start, end, this.line)
  }

  private append(chunk: Uint8Array, start: number, end: number): void {
    const needed = this.carryLength + (end - start)
    if (needed > this.maxLineLength) {
      throw errorAtLine(this.line + 1, `line is longer than ${this.maxLineLength} bytes (is this really a text file?)`)
    }
    if (needed > this.carry.length) {
      const grown = new Uint8Array(Math.min(Math.max(needed, this.carry.length * 2), this.maxLineLength))
      grown.set(this.carry.subarray(0, this.carryLength))
      this.carry = grown
    }
    this.carry.set(chunk.subarray(start, end), this.carryLength)
    this.carryLength = needed
  }
}
