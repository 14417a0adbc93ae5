import { errorAtByte, errorAtLine, errorInHeader, type ScanErrorLocation } from './errors'
import { HeaderLines } from './headerLines'
import { LineSplitter } from './lineSplitter'
import { NumberScanner } from './numberScanner'
import { ReaderBase } from './readerBase'
import { RecordFeeder, firstNonBlank } from './recordFeeder'
import { float32Triples } from './recordLoops'
import {
  FLOAT32,
  FLOAT64,
  INT16,
  INT32,
  INT64,
  INT8,
  UINT16,
  UINT32,
  UINT64,
  UINT8,
  readScalar,
  type ScalarCode,
} from './scalarTypes'
import { clip, notANumber } from './textUtil'
import type { PcdField, PcdHeaderInfo, ReaderOptions } from './types'
import { decompress as lzfDecompress } from 'lzfjs'

/**
 * PCD 0.7 (the Point Cloud Library's format): a text header VERSION, FIELDS, SIZE, TYPE, COUNT, WIDTH,
 * HEIGHT, VIEWPOINT, POINTS, DATA, then the points as ascii lines or little-endian binary records.
 * Reads x y z, a packed colour (`rgb`: the 4 bytes of a float holding 0x00RRGGBB, or `rgba`: a uint32
 * 0xAARRGGBB) and `intensity`; field names in any case (`X Y Z`). DATA binary_compressed is one LZF
 * block after two uint32 sizes (compressed, unpacked) holding the points field by field (all x, then all
 * y, ...); it is unpacked whole, its sizes checked against the file, the points and `maxPcdUnpackedBytes`
 * before anything is allocated. A point whose x, y and z are all NaN (how PCL marks an organised cloud's
 * pixel without a return) is dropped and counted as `notANumber`; what follows the block is ignored.
 */

export const DEFAULT_MAX_PCD_UNPACKED_BYTES = 32 * 1024 * 1024

const MAX_HEADER = 1 << 16
const KEYS = ['VERSION', 'FIELDS', 'SIZE', 'TYPE', 'COUNT', 'WIDTH', 'HEIGHT', 'VIEWPOINT', 'POINTS', 'DATA']

interface Column {
  offset: number
  type: ScalarCode
  /** Token index on an ascii line. */
  token: number
}

export class PcdReader extends ReaderBase {
  readonly format = 'pcd' as const
  declare header: PcdHeaderInfo | null
  private readonly values = new Map<string, { words: string[]; line: number }>()
  private readonly headerLines = new HeaderLines((text, line) => this.headerLine(text, line), MAX_HEADER, 'PCD')
  private inBody = false
  private feeder: RecordFeeder | null = null
  private lines: LineSplitter | null = null
  private readonly scanner = new NumberScanner()
  private xyz: [Column, Column, Column] | null = null
  private color: (Column & { float: boolean }) | null = null
  private intensity: Column | null = null
  private recordLength = 0
  private tokensPerLine = 0
  private bodyStart = 0
  private pointsDeclared = 0
  /** ascii: point lines read, kept or dropped. */
  private asciiPoints = 0
  /** binary_compressed: the 8-byte size prefix, then the LZF block, gathered whole. */
  private compressed: { prefix: Uint8Array; prefixLength: number; block: Uint8Array | null; filled: number; done: boolean } | null = null
  private readonly packed = new Float32Array(1)
  private readonly packedBits = new Uint32Array(this.packed.buffer)

  constructor(options: ReaderOptions) {
    super(options)
  }

  protected consume(chunk: Uint8Array, fileOffset: number): void {
    let pos = 0
    if (!this.inBody) {
      pos = this.headerLines.push(chunk, 0, chunk.length)
      if (pos < 0) return
      this.startBody()
      this.bodyStart = fileOffset + pos
    }
    if (this.lines) {
      this.lines.push(chunk, pos, chunk.length)
      return
    }
    if (this.compressed) {
      this.consumeCompressed(chunk, pos, fileOffset)
      return
    }
    const feeder = this.feeder!
    const view = new DataView(chunk.buffer, chunk.byteOffset, chunk.byteLength)
    if (!feeder.finished) pos = feeder.feed(chunk, view, pos, chunk.length, fileOffset)
    const at = feeder.finished ? firstNonBlank(chunk, pos) : -1
    if (at >= 0) {
      throw errorAtByte(
        fileOffset + at,
        `data continues after the ${this.pointsDeclared} points declared in the header (POINTS disagrees with the body)`,
      )
    }
  }

  protected finish(): void {
    if (!this.inBody) {
      throw errorAtByte(this.bytesSeen, 'the file ends inside the PCD header (no DATA line)')
    }
    if (this.lines) {
      this.lines.end()
      const done = this.asciiPoints
      if (done < this.pointsDeclared) {
        throw errorAtLine(this.lines.line, `file ends after ${done} of ${this.pointsDeclared} points declared in the header`)
      }
      return
    }
    if (this.compressed) {
      const c = this.compressed
      if (!c.done) {
        const got = c.prefixLength + c.filled
        const need = 8 + (c.block ? c.block.length : 0)
        throw errorAtByte(
          this.bytesSeen,
          c.block
            ? `file ends inside the compressed block (${got} of its ${need} bytes with the size prefix)`
            : `file ends inside the binary_compressed size prefix (${got} of 8 bytes)`,
        )
      }
      return
    }
    const feeder = this.feeder!
    if (!feeder.finished) {
      throw errorAtByte(
        this.bytesSeen,
        feeder.pending > 0
          ? `file ends inside point ${feeder.done + 1} of ${this.pointsDeclared} declared in the header`
          : `file ends after ${feeder.done} of ${this.pointsDeclared} points declared in the header`,
      )
    }
  }

  private headerLine(text: string, line: number): boolean {
    const trimmed = text.trim()
    if (trimmed === '' || trimmed.startsWith('#')) return false
    const words = trimmed.split(/\s+/)
    const key = (words[0] ?? '').toUpperCase()
    if (!KEYS.includes(key)) {
      throw errorInHeader(`'${clip(words[0] ?? '')}' is not a PCD header key (${KEYS.join(', ')})`, { line })
    }
    if (this.values.has(key)) throw errorInHeader(`${key} given twice`, { line })
    this.values.set(key, { words: words.slice(1), line })
    return key === 'DATA'
  }

  private startBody(): void {
    const get = (key: string) => this.values.get(key)
    const line = (key: string) => get(key)?.line ?? this.headerLines.line
    const require = (key: string): string[] => {
      const entry = get(key)
      if (!entry) throw errorInHeader(`no ${key} line`, { field: key })
      return entry.words
    }
    const whole = (key: string, word: string | undefined): number => {
      if (!word || !/^\d+$/.test(word)) throw errorInHeader(`${key} '${word ?? ''}' is not a whole number`, { line: line(key) })
      return Number(word)
    }
    const data = require('DATA')[0] ?? ''
    if (data !== 'ascii' && data !== 'binary' && data !== 'binary_compressed') {
      throw errorInHeader(`DATA '${clip(data)}' is not ascii, binary or binary_compressed`, { line: line('DATA') })
    }
    const names = require('FIELDS')
    const sizes = require('SIZE').map((w) => whole('SIZE', w))
    const types = require('TYPE')
    const counts = get('COUNT') ? require('COUNT').map((w) => whole('COUNT', w)) : names.map(() => 1)
    for (const [key, list] of [['SIZE', sizes], ['TYPE', types], ['COUNT', counts]] as const) {
      if (list.length !== names.length) {
        throw errorInHeader(`${key} has ${list.length} entries for ${names.length} FIELDS`, { line: line(key) })
      }
    }
    const fields: PcdField[] = names.map((name, i) => {
      const type = (types[i] ?? '').toUpperCase()
      if (type !== 'I' && type !== 'U' && type !== 'F') {
        throw errorInHeader(`TYPE '${types[i]}' of field ${name} is not I, U or F`, { line: line('TYPE') })
      }
      return { name, size: sizes[i] as number, type, count: counts[i] as number }
    })
    const width = whole('WIDTH', require('WIDTH')[0])
    const height = get('HEIGHT') ? whole('HEIGHT', require('HEIGHT')[0]) : 1
    const points = get('POINTS') ? whole('POINTS', require('POINTS')[0]) : width * height
    if (points !== width * height) {
      throw errorInHeader(`POINTS ${points} is not WIDTH x HEIGHT (${width} x ${height} = ${width * height})`, {
        line: line('POINTS'),
      })
    }
    if (points > this.maxPoints) {
      throw errorInHeader(`POINTS declares ${points} points, more than the ${this.maxPoints} this reader accepts`, {
        line: line('POINTS'),
      })
    }
    if (points === 0) throw errorInHeader('POINTS 0: the file holds no points', { line: line('POINTS') })

    let offset = 0
    let token = 0
    const columns = new Map<string, Column & { field: PcdField }>()
    for (const field of fields) {
      const code = scalarCode(field, line('TYPE'))
      const key = field.name.toLowerCase()
      if (!columns.has(key)) columns.set(key, { offset, type: code, token, field })
      offset += field.size * field.count
      token += field.count
    }
    this.recordLength = offset
    this.tokensPerLine = token
    const pick = (name: string): (Column & { field: PcdField }) | null => {
      const column = columns.get(name) ?? null
      if (column && column.field.count !== 1) {
        throw errorInHeader(`field ${column.field.name} has COUNT ${column.field.count}, expected 1`, { line: line('COUNT') })
      }
      return column
    }
    const x = pick('x')
    const y = pick('y')
    const z = pick('z')
    for (const [name, found] of [['x', x], ['y', y], ['z', z]] as const) {
      if (!found) throw errorInHeader(`FIELDS has no '${name}' (in any case)`, { line: line('FIELDS') })
    }
    this.xyz = [x!, y!, z!]
    const color = pick('rgb') ?? pick('rgba')
    if (color && color.field.size !== 4) {
      throw errorInHeader(`field ${color.field.name} has SIZE ${color.field.size}, expected 4 (packed colour)`, {
        line: line('SIZE'),
      })
    }
    this.color = color ? { ...color, float: color.field.type === 'F' } : null
    this.intensity = pick('intensity')
    this.pointsDeclared = points

    if (data === 'binary' && this.options.byteLength !== undefined) {
      const available = this.options.byteLength - this.headerLines.length
      if (points * offset > available) {
        throw errorInHeader(
          `POINTS ${points} of ${offset} bytes need ${points * offset} bytes after the header, but the file holds ${available}`,
          { line: line('POINTS') },
        )
      }
    }

    const viewpoint = get('VIEWPOINT')?.words.map(Number) ?? [0, 0, 0, 1, 0, 0, 0]
    this.header = {
      format: 'pcd',
      version: get('VERSION')?.words[0] ?? '',
      fields,
      width,
      height,
      viewpoint,
      points,
      data,
      hasColor: this.color !== null,
      hasIntensity: this.intensity !== null,
      hasUncertainty: false,
      declaredPointCount: points,
    }
    const layout = { color: this.color !== null, intensity: this.intensity !== null, uncertainty: false }
    this.inBody = true
    if (data === 'ascii') {
      this.lines = new LineSplitter((b, s, e, l) => this.asciiLine(b, s, e, l), this.headerLines.line + 1)
      this.createSink(layout, () => ({ line: this.lines?.line ?? 0 }))
    } else if (data === 'binary') {
      this.feeder = new RecordFeeder(points, offset, this.decode)
      this.createSink(layout, (index): ScanErrorLocation => ({ byte: this.bodyStart + index * this.recordLength }))
    } else {
      this.compressed = { prefix: new Uint8Array(8), prefixLength: 0, block: null, filled: 0, done: false }
      this.createSink(layout, (): ScanErrorLocation => ({ byte: this.bodyStart }))
    }
  }

  /** binary_compressed: gathers the size prefix and the block, then unpacks and decodes it. */
  private consumeCompressed(chunk: Uint8Array, start: number, fileOffset: number): void {
    const c = this.compressed!
    let pos = start
    if (c.prefixLength < 8) {
      const take = Math.min(8 - c.prefixLength, chunk.length - pos)
      c.prefix.set(chunk.subarray(pos, pos + take), c.prefixLength)
      c.prefixLength += take
      pos += take
      if (c.prefixLength < 8) return
      c.block = new Uint8Array(this.checkCompressedSizes())
    }
    if (!c.done) {
      const block = c.block!
      const take = Math.min(block.length - c.filled, chunk.length - pos)
      block.set(chunk.subarray(pos, pos + take), c.filled)
      c.filled += take
      pos += take
      if (c.filled < block.length) return
      c.done = true
      this.unpack(block)
      c.block = null
    }
    // What follows the block is ignored: PCL's writer sizes the file it maps in whole pages, zero-filled.
    void fileOffset
  }

  /** Checks the two declared sizes before anything is allocated; returns the compressed size. */
  private checkCompressedSizes(): number {
    const view = new DataView(this.compressed!.prefix.buffer)
    const packedSize = view.getUint32(0, true)
    const unpackedSize = view.getUint32(4, true)
    const where = this.bodyStart
    const points = this.pointsDeclared
    const limit = this.options.maxPcdUnpackedBytes ?? DEFAULT_MAX_PCD_UNPACKED_BYTES
    // PCL leaves padding fields named '_' out of the compressed block.
    const padding = this.header!.fields.filter((f) => f.name === '_').reduce((n, f) => n + f.size * f.count, 0)
    const accepted = padding > 0 ? [this.recordLength, this.recordLength - padding] : [this.recordLength]
    const stride = accepted.find((length) => length * points === unpackedSize)
    if (stride === undefined) {
      throw errorAtByte(
        where + 4,
        `the compressed block declares ${unpackedSize} unpacked bytes, but POINTS ${points} of ${this.recordLength} bytes need ${points * this.recordLength}`,
      )
    }
    if (unpackedSize > limit) {
      throw errorAtByte(
        where + 4,
        `the compressed block unpacks to ${unpackedSize} bytes, more than the ${limit} this reader unpacks in memory: save the cloud with DATA binary`,
      )
    }
    if (packedSize === 0) throw errorAtByte(where, 'the compressed block declares a size of 0 bytes')
    // LZF never grows data by more than 1/32 plus a byte (liblzf's lzf.h).
    const packedLimit = unpackedSize + Math.ceil(unpackedSize / 32) + 16
    if (packedSize > packedLimit) {
      throw errorAtByte(where, `the compressed block declares ${packedSize} bytes, more than LZF can take for ${unpackedSize} unpacked bytes`)
    }
    if (this.options.byteLength !== undefined && where + 8 + packedSize > this.options.byteLength) {
      throw errorAtByte(
        where,
        `the compressed block declares ${packedSize} bytes, but the file holds ${Math.max(0, this.options.byteLength - where - 8)} after its size prefix`,
      )
    }
    this.unpackedStride = stride
    this.unpackedSize = unpackedSize
    return packedSize
  }

  private unpackedStride = 0
  private unpackedSize = 0

  private unpack(block: Uint8Array): void {
    const where = this.bodyStart + 8
    const length = lzfLength(block, this.unpackedSize)
    if (length.error !== null) throw errorAtByte(where + length.at, `the compressed block is not valid LZF (${length.error})`)
    if (length.size !== this.unpackedSize) {
      throw errorAtByte(where, `the compressed block unpacks to ${length.size} bytes, not the ${this.unpackedSize} it declares`)
    }
    let unpacked: Uint8Array
    try {
      unpacked = lzfDecompress(block)
    } catch (error) {
      throw errorAtByte(where, `the compressed block is not valid LZF (${error instanceof Error ? error.message : String(error)})`)
    }
    if (unpacked.length !== this.unpackedSize) {
      throw errorAtByte(where, `the compressed block unpacks to ${unpacked.length} bytes, not the ${this.unpackedSize} it declares`)
    }
    this.decodeFields(new DataView(unpacked.buffer, unpacked.byteOffset, unpacked.byteLength))
  }

  /** The unpacked block holds each field for every point before the next field (structure of arrays). */
  private decodeFields(view: DataView): void {
    const points = this.pointsDeclared
    const skipPadding = this.unpackedStride !== this.recordLength
    const starts = new Map<number, number>()
    let at = 0
    let recordOffset = 0
    for (const field of this.header!.fields) {
      const size = field.size * field.count
      starts.set(recordOffset, at)
      recordOffset += size
      if (skipPadding && field.name === '_') continue
      at += size * points
    }
    const column = (c: Column) => ({ base: starts.get(c.offset) as number, size: (this.header!.fields.find((_, i, all) => offsetOf(all, i) === c.offset) as PcdField).size })
    const [cx, cy, cz] = this.xyz!.map(column) as [{ base: number; size: number }, { base: number; size: number }, { base: number; size: number }]
    const [x, y, z] = this.xyz!
    const color = this.color ? column(this.color) : null
    const intensity = this.intensity ? column(this.intensity) : null
    const sink = this.sink!
    let done = 0
    while (done < points) {
      const n = Math.min(sink.room, points - done)
      const p = sink.positions
      let w = sink.count * 3
      for (let i = done; i < done + n; i++, w += 3) {
        p[w] = readScalar(view, cx.base + i * cx.size, x.type, true)
        p[w + 1] = readScalar(view, cy.base + i * cy.size, y.type, true)
        p[w + 2] = readScalar(view, cz.base + i * cz.size, z.type, true)
      }
      if (color) {
        const c = sink.colors!
        let j = sink.count * 3
        for (let i = done; i < done + n; i++, j += 3) {
          const packed = view.getUint32(color.base + i * 4, true)
          c[j] = (packed >>> 16) & 255
          c[j + 1] = (packed >>> 8) & 255
          c[j + 2] = packed & 255
        }
      }
      if (intensity) {
        const values = sink.intensities!
        let j = sink.count
        for (let i = done; i < done + n; i++, j++) values[j] = readScalar(view, intensity.base + i * intensity.size, this.intensity!.type, true)
      }
      sink.commit(this.dropNaN(n))
      done += n
    }
  }

  /**
   * Moves the points whose x, y and z are all NaN (PCL's mark for a pixel without a return) out of the
   * sink's last `n` slots; returns how many stay. A point with only some NaN coordinates stays, and the
   * sink refuses it as not finite.
   */
  private dropNaN(n: number): number {
    const sink = this.sink!
    const p = sink.positions
    const c = sink.colors
    const v = sink.intensities
    const first = sink.count
    let kept = first
    for (let i = first; i < first + n; i++) {
      const w = i * 3
      if (Number.isNaN(p[w]) && Number.isNaN(p[w + 1]) && Number.isNaN(p[w + 2])) {
        this.countDrop('notANumber')
        continue
      }
      if (kept !== i) {
        const k = kept * 3
        p[k] = p[w] as number
        p[k + 1] = p[w + 1] as number
        p[k + 2] = p[w + 2] as number
        if (c) {
          c[k] = c[w] as number
          c[k + 1] = c[w + 1] as number
          c[k + 2] = c[w + 2] as number
        }
        if (v) v[kept] = v[i] as number
      }
      kept++
    }
    return kept - first
  }

  private readonly decode = (view: DataView, offset: number, count: number): void => {
    const sink = this.sink!
    const [x, y, z] = this.xyz!
    const stride = this.recordLength
    let done = 0
    while (done < count) {
      const n = Math.min(sink.room, count - done)
      const first = offset + done * stride
      const p = sink.positions
      let w = sink.count * 3
      if (x.type === FLOAT32 && y.type === FLOAT32 && z.type === FLOAT32) {
        float32Triples(view, first, stride, n, x.offset, y.offset, z.offset, true, p, w)
      } else {
        for (let i = 0, b = first; i < n; i++, b += stride, w += 3) {
          p[w] = readScalar(view, b + x.offset, x.type, true)
          p[w + 1] = readScalar(view, b + y.offset, y.type, true)
          p[w + 2] = readScalar(view, b + z.offset, z.type, true)
        }
      }
      if (this.color) {
        const c = sink.colors!
        const o = this.color.offset
        let j = sink.count * 3
        for (let i = 0, b = first; i < n; i++, b += stride, j += 3) {
          const packed = view.getUint32(b + o, true)
          c[j] = (packed >>> 16) & 255
          c[j + 1] = (packed >>> 8) & 255
          c[j + 2] = packed & 255
        }
      }
      if (this.intensity) {
        const values = sink.intensities!
        const { offset: o, type } = this.intensity
        let j = sink.count
        for (let i = 0, b = first; i < n; i++, b += stride, j++) values[j] = readScalar(view, b + o, type, true)
      }
      sink.commit(this.dropNaN(n))
      done += n
    }
  }

  private asciiLine(bytes: Uint8Array, start: number, end: number, line: number): void {
    let pos = start
    while (pos < end && isSpace(bytes[pos] as number)) pos++
    if (pos === end) return
    const sink = this.sink!
    if (this.asciiPoints >= this.pointsDeclared) {
      throw errorAtLine(
        line,
        `data continues after the ${this.pointsDeclared} points declared in the header (POINTS disagrees with the body)`,
      )
    }
    const [x, y, z] = this.xyz!
    const w = sink.count * 3
    const scanner = this.scanner
    let token = 0
    while (pos < end) {
      let stop = pos
      while (stop < end && !isSpace(bytes[stop] as number)) stop++
      let target = -1
      if (token === x.token) target = 0
      else if (token === y.token) target = 1
      else if (token === z.token) target = 2
      else if (this.color && token === this.color.token) target = 3
      else if (this.intensity && token === this.intensity.token) target = 4
      if (target >= 0) {
        if (!scanner.read(bytes, pos, stop)) throw notANumber(bytes, pos, stop, line, `value ${token + 1}`)
        const value = scanner.value
        if (target < 3) sink.positions[w + target] = value
        else if (target === 3) this.asciiColor(value, w)
        else sink.intensities![sink.count] = value
      }
      token++
      pos = stop
      while (pos < end && isSpace(bytes[pos] as number)) pos++
    }
    if (token !== this.tokensPerLine) {
      throw errorAtLine(line, `expected ${this.tokensPerLine} values (${this.header!.fields.map((f) => f.name).join(' ')}), found ${token}`)
    }
    const axes = ['x', 'y', 'z']
    const p = sink.positions
    this.asciiPoints++
    if (Number.isNaN(p[w]) && Number.isNaN(p[w + 1]) && Number.isNaN(p[w + 2])) {
      this.countDrop('notANumber')
      return
    }
    for (let a = 0; a < 3; a++) {
      const v = sink.positions[w + a] as number
      if (v - v !== 0) {
        throw errorAtLine(line, `point ${this.asciiPoints} has a coordinate that is not a finite number (${axes[a]} = ${v})`)
      }
    }
    sink.commit(1)
  }

  /** An ascii `rgb` float carries the colour in its bit pattern; an integer `rgba` directly. */
  private asciiColor(value: number, w: number): void {
    let packed: number
    if (this.color!.float) {
      this.packed[0] = value
      packed = this.packedBits[0] as number
    } else {
      packed = value >>> 0
    }
    const c = this.sink!.colors!
    c[w] = (packed >>> 16) & 255
    c[w + 1] = (packed >>> 8) & 255
    c[w + 2] = packed & 255
  }
}

function scalarCode(field: PcdField, line: number): ScalarCode {
  const key = `${field.type}${field.size}`
  const code = ({ I1: INT8, I2: INT16, I4: INT32, I8: INT64, U1: UINT8, U2: UINT16, U4: UINT32, U8: UINT64, F4: FLOAT32, F8: FLOAT64 } as Record<string, number>)[key]
  if (code === undefined) {
    throw errorInHeader(`field ${field.name}: TYPE ${field.type} with SIZE ${field.size} is not a PCD type`, { line })
  }
  return code
}

function isSpace(c: number): boolean {
  return c === 32 || c === 9 || c === 13
}

/** Byte offset within a record of field `index`. */
function offsetOf(fields: PcdField[], index: number): number {
  let offset = 0
  for (let i = 0; i < index; i++) offset += (fields[i] as PcdField).size * (fields[i] as PcdField).count
  return offset
}

/**
 * Walks an LZF block's control bytes (liblzf's lzf_d.c format: a byte below 32 starts a literal run of
 * that many plus one bytes; otherwise its top 3 bits (7: plus a length byte) and low 5 bits with the next
 * byte give a back reference of length + 2) and returns the unpacked size without unpacking, stopping once
 * it passes `limit`. Lets the reader check the declared size before the decompressor allocates.
 */
export function lzfLength(block: Uint8Array, limit: number): { size: number; error: string | null; at: number } {
  let ip = 0
  let op = 0
  while (ip < block.length) {
    const at = ip
    const ctrl = block[ip++] as number
    if (ctrl < 32) {
      const run = ctrl + 1
      if (ip + run > block.length) return { size: op, error: `a literal run of ${run} bytes goes past the block's end`, at }
      ip += run
      op += run
    } else {
      let len = ctrl >> 5
      if (len === 7) {
        if (ip >= block.length) return { size: op, error: 'a back reference is cut by the block\'s end', at }
        len += block[ip++] as number
      }
      if (ip >= block.length) return { size: op, error: 'a back reference is cut by the block\'s end', at }
      const distance = ((ctrl & 31) << 8) + (block[ip++] as number) + 1
      if (distance > op) return { size: op, error: `a back reference reaches ${distance} bytes back, before the block's start`, at }
      op += len + 2
    }
    if (op > limit) return { size: op, error: `it unpacks to more than the ${limit} bytes declared`, at }
  }
  return { size: op, error: null, at: 0 }
}
