import { errorAtByte } from './errors'

/**
 * Collects the text header of a binary-capable format (PLY, PCD) line by line, so that the body that
 * follows it in the same chunk is never decoded as text. Lines end at '\n'; a trailing '\r' is dropped.
 */
export class HeaderLines {
  /** Lines read so far; the number of the last line handed out. */
  line = 0
  /** Header bytes consumed so far. */
  length = 0
  private partial: number[] = []

  /**
   * @param onLine returns true when this line ends the header
   * @param maxLength the header may not be longer than this
   */
  constructor(
    private readonly onLine: (text: string, line: number) => boolean,
    private readonly maxLength: number,
    private readonly describe: string,
  ) {}

  /** Consumes header lines from chunk[start, end); returns where the body starts, or -1 if the header goes on. */
  push(chunk: Uint8Array, start: number, end: number): number {
    let pos = start
    while (pos < end) {
      const newline = chunk.indexOf(10, pos)
      const stop = newline < 0 || newline >= end ? end : newline
      if (this.length + (stop - pos) > this.maxLength) {
        throw errorAtByte(this.maxLength, `no end of the ${this.describe} header within its first ${this.maxLength} bytes`)
      }
      for (let i = pos; i < stop; i++) this.partial.push(chunk[i] as number)
      this.length += stop - pos
      if (stop === end) return -1
      this.length += 1
      pos = stop + 1
      if (this.emit()) return pos
    }
    return -1
  }

  /** The text of an unfinished last line. */
  get pendingText(): string {
    return decode(this.partial)
  }

  private emit(): boolean {
    const bytes = this.partial
    if (bytes.length > 0 && bytes[bytes.length - 1] === 13) bytes.pop()
    const text = decode(bytes)
    this.partial = []
    this.line++
    return this.onLine(text, this.line)
  }
}

function decode(bytes: number[]): string {
  let text = ''
  for (const b of bytes) text += String.fromCharCode(b)
  return text
}
