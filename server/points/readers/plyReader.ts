import { errorAtByte, errorAtLine, errorInHeader, type ScanErrorLocation } from './errors'
import { HeaderLines } from './headerLines'
import { LineSplitter } from './lineSplitter'
import { NumberScanner } from './numberScanner'
import { PLY_SCALAR_CODE, PlyHeaderParser, plyFixedLength, plyRecordMinLength } from './plyHeader'
import { ReaderBase } from './readerBase'
import { RecordFeeder, firstNonBlank } from './recordFeeder'
import { byteTriples, float32Triples } from './recordLoops'
import { notANumber } from './textUtil'
import { FLOAT32, SCALAR_SIZE, UINT8, colorChannel, readScalar, type ScalarCode } from './scalarTypes'
import type { PlyElement, PlyHeaderInfo, ReaderOptions } from './types'

/**
 * PLY (Turk 1994): ascii, binary_little_endian and binary_big_endian. Reads x y z from the `vertex`
 * element, with red green blue (or r g b, diffuse_red ...) and an intensity (a property named intensity,
 * else the first scalar_* property) when present. Other elements (faces, edges) and list properties are
 * skipped but still checked against the header's counts.
 */

const MAX_HEADER = 1 << 18
const COLOR_NAMES = [
  ['red', 'r', 'diffuse_red'],
  ['green', 'g', 'diffuse_green'],
  ['blue', 'b', 'diffuse_blue'],
] as const

/** A vertex property the reader keeps: its index among the element's properties, type and byte offset. */
interface Wanted {
  index: number
  type: ScalarCode
  offset: number
}

export class PlyReader extends ReaderBase {
  readonly format = 'ply' as const
  declare header: PlyHeaderInfo | null
  private readonly parser = new PlyHeaderParser()
  private readonly headerLines = new HeaderLines((text, line) => this.parser.line(text, line), MAX_HEADER, 'PLY')
  private inBody = false
  private magicSeen = 0
  private elements: PlyElement[] = []
  private elementIndex = 0
  private vertexIndex = -1
  private littleEndian = true
  private feeder: RecordFeeder | null = null
  private lines: LineSplitter | null = null
  private readonly scanner = new NumberScanner()
  /** Records of the current element read so far (ascii). */
  private recordsDone = 0
  private vertexStartByte = 0
  private position: [Wanted, Wanted, Wanted] | null = null
  private colors: [Wanted, Wanted, Wanted] | null = null
  private colorsAreBytes = false
  private intensity: Wanted | null = null
  private stride = 0
  /** Byte offsets of the vertex properties of the record being decoded (records with lists). */
  private offsets: number[] = []

  constructor(options: ReaderOptions) {
    super(options)
  }

  protected consume(chunk: Uint8Array, fileOffset: number): void {
    let pos = 0
    if (!this.inBody) {
      // Checked byte by byte as they come, so that a binary file is not read as a 256 KiB header.
      for (let i = 0; this.magicSeen < 3 && i < chunk.length; i++, this.magicSeen++) {
        if (chunk[i] !== PLY_MAGIC[this.magicSeen]) {
          throw errorInHeader(`a PLY file starts with the line 'ply'`, { line: 1 })
        }
      }
      pos = this.headerLines.push(chunk, 0, chunk.length)
      if (pos < 0) return
      this.startBody()
    }
    if (this.lines) {
      this.lines.push(chunk, pos, chunk.length)
      return
    }
    this.consumeBinary(chunk, pos, fileOffset)
  }

  protected finish(): void {
    if (!this.inBody) {
      if (this.headerLines.line === 0 && !this.headerLines.pendingText.startsWith('ply')) {
        throw errorInHeader(`a PLY file starts with the line 'ply'`, { line: 1 })
      }
      throw errorAtByte(this.bytesSeen, 'the file ends inside the PLY header (no end_header line)')
    }
    if (this.lines) {
      this.lines.end()
      if (this.elementIndex < this.elements.length) {
        const element = this.elements[this.elementIndex] as PlyElement
        throw errorAtLine(this.lines.line, `file ends after ${this.shortBy(element, this.recordsDone)}`)
      }
      return
    }
    const feeder = this.feeder
    if (feeder && this.elementIndex < this.elements.length) {
      const element = this.elements[this.elementIndex] as PlyElement
      const isVertex = this.elementIndex === this.vertexIndex
      const noun = isVertex ? 'point' : `${element.name} record`
      const message =
        feeder.pending > 0
          ? `file ends inside ${noun} ${feeder.done + 1} of ${element.count} declared in the header`
          : `file ends after ${this.shortBy(element, feeder.done)}`
      throw errorAtByte(this.bytesSeen, message)
    }
  }

  protected override noPointsDetail(): string {
    return ' (element vertex is empty)'
  }

  private shortBy(element: PlyElement, done: number): string {
    const isVertex = element === this.elements[this.vertexIndex]
    return isVertex
      ? `${done} of ${element.count} points declared in the header`
      : `${done} of ${element.count} ${element.name} records declared in the header`
  }

  private startBody(): void {
    const parser = this.parser
    const headerEnd = this.headerLines.line
    if (!parser.encoding) throw errorInHeader('no format line', { line: headerEnd })
    this.elements = parser.elements
    this.vertexIndex = this.elements.findIndex((e) => e.name === 'vertex')
    const vertex = this.elements[this.vertexIndex]
    if (!vertex) throw errorInHeader(`no element 'vertex', so no points`, { line: headerEnd })
    const declaredLine = parser.elementLines[this.vertexIndex]
    if (vertex.count > this.maxPoints) {
      throw errorInHeader(
        `element vertex declares ${vertex.count} points, more than the ${this.maxPoints} this reader accepts`,
        { line: declaredLine },
      )
    }
    if (vertex.count === 0) {
      throw errorInHeader('element vertex declares 0 points: the file holds no points', { line: declaredLine })
    }
    this.checkDeclaredSize(parser.encoding === 'ascii')
    this.setUpVertex(vertex, declaredLine ?? headerEnd)

    this.header = {
      format: 'ply',
      encoding: parser.encoding,
      elements: this.elements,
      comments: parser.comments,
      headerLength: this.headerLines.length,
      hasColor: this.colors !== null,
      hasIntensity: this.intensity !== null,
      hasUncertainty: false,
      declaredPointCount: vertex.count,
    }
    this.inBody = true
    this.littleEndian = parser.encoding !== 'binary_big_endian'
    const layout = { color: this.colors !== null, intensity: this.intensity !== null, uncertainty: false }
    if (parser.encoding === 'ascii') {
      this.lines = new LineSplitter((b, s, e, l) => this.asciiLine(b, s, e, l), headerEnd + 1)
      // Text errors are raised per line; this only guards binary-like surprises.
      this.createSink(layout, () => ({ line: this.lines?.line ?? 0 }))
    } else {
      this.createSink(layout, (index) => this.locateBinaryPoint(index))
    }
    this.elementIndex = -1
    this.nextElement(this.headerLines.length)
  }

  /** A header that declares more data than the upload holds fails before reading the body. */
  private checkDeclaredSize(ascii: boolean): void {
    const total = this.options.byteLength
    if (total === undefined) return
    let minimum = 0
    for (const element of this.elements) {
      // ascii: each value takes at least one character and one separator.
      const perRecord = ascii ? Math.max(1, element.properties.length) * 2 : plyRecordMinLength(element)
      minimum += element.count * perRecord
    }
    const available = total - this.headerLines.length
    if (minimum > available) {
      throw errorInHeader(
        `the declared elements need at least ${minimum} bytes after the header, but the file holds ${available}`,
      )
    }
  }

  private setUpVertex(vertex: PlyElement, line: number): void {
    const props = vertex.properties
    let offset = 0
    const wanted = (names: readonly string[]): Wanted | null => {
      const index = props.findIndex((p) => names.includes(p.name.toLowerCase()))
      if (index < 0) return null
      const p = props[index]
      if (!p) return null
      if (p.countType) {
        throw errorInHeader(`vertex property '${p.name}' is a list, expected a single number`, { line })
      }
      return { index, type: PLY_SCALAR_CODE[p.type], offset: 0 }
    }
    const x = wanted(['x'])
    const y = wanted(['y'])
    const z = wanted(['z'])
    for (const [name, found] of [['x', x], ['y', y], ['z', z]] as const) {
      if (!found) throw errorInHeader(`element vertex has no property '${name}'`, { line })
    }
    this.position = [x as Wanted, y as Wanted, z as Wanted]
    const r = wanted(COLOR_NAMES[0])
    const g = wanted(COLOR_NAMES[1])
    const b = wanted(COLOR_NAMES[2])
    this.colors = r && g && b ? [r, g, b] : null
    this.colorsAreBytes = this.colors !== null && this.colors.every((c) => c.type === UINT8)
    this.intensity = wanted(['intensity', 'scalar_intensity'])
    if (!this.intensity) {
      const index = props.findIndex((p) => p.name.toLowerCase().startsWith('scalar') && !p.countType)
      if (index >= 0) this.intensity = wanted([(props[index] as { name: string }).name.toLowerCase()])
    }
    // Byte offsets within a fixed-length record.
    const offsets: number[] = []
    for (const p of props) {
      offsets.push(offset)
      offset += SCALAR_SIZE[PLY_SCALAR_CODE[p.countType ?? p.type]] as number
    }
    for (const w of [...this.position, ...(this.colors ?? []), this.intensity]) {
      if (w) w.offset = offsets[w.index] as number
    }
    this.stride = plyFixedLength(vertex)
    this.offsets = new Array<number>(props.length).fill(0)
  }

  /** Moves to the next element with records; `fileOffset` is where its first record starts. */
  private nextElement(fileOffset: number): void {
    this.elementIndex++
    while (this.elementIndex < this.elements.length && (this.elements[this.elementIndex] as PlyElement).count === 0) {
      this.elementIndex++
    }
    this.recordsDone = 0
    const element = this.elements[this.elementIndex]
    if (!element || this.lines) return
    const isVertex = this.elementIndex === this.vertexIndex
    if (isVertex) this.vertexStartByte = fileOffset
    const fixed = plyFixedLength(element)
    const decode = isVertex
      ? fixed > 0
        ? this.decodeFixedVertices
        : this.decodeVariableVertex
      : skipRecords
    this.feeder = new RecordFeeder(element.count, fixed, decode, fixed > 0 ? null : this.measureFor(element))
  }

  private consumeBinary(chunk: Uint8Array, start: number, fileOffset: number): void {
    const view = new DataView(chunk.buffer, chunk.byteOffset, chunk.byteLength)
    let pos = start
    while (pos < chunk.length) {
      const feeder = this.feeder
      if (!feeder || this.elementIndex >= this.elements.length) {
        this.checkTrailer(chunk, pos, fileOffset)
        return
      }
      pos = feeder.feed(chunk, view, pos, chunk.length, fileOffset)
      if (!feeder.finished) return
      this.nextElement(fileOffset + pos)
    }
  }

  /** After the last element only whitespace may follow. */
  private checkTrailer(chunk: Uint8Array, start: number, fileOffset: number): void {
    const at = firstNonBlank(chunk, start)
    if (at >= 0) {
      throw errorAtByte(fileOffset + at, `data continues after ${this.lastElementText()} (the header's counts disagree with the body)`)
    }
  }

  private lastElementText(): string {
    const last = this.elements[this.elements.length - 1] as PlyElement
    return this.elements.length - 1 === this.vertexIndex
      ? `the ${last.count} points declared in the header`
      : `the ${last.count} ${last.name} records declared in the header`
  }

  private locateBinaryPoint(index: number): ScanErrorLocation {
    return { byte: this.stride > 0 ? this.vertexStartByte + index * this.stride : this.vertexStartByte }
  }

  private readonly decodeFixedVertices = (view: DataView, offset: number, count: number): void => {
    const sink = this.sink!
    const [x, y, z] = this.position!
    const le = this.littleEndian
    const stride = this.stride
    const allFloat = x.type === FLOAT32 && y.type === FLOAT32 && z.type === FLOAT32
    let done = 0
    while (done < count) {
      const n = Math.min(sink.room, count - done)
      const p = sink.positions
      const first = offset + done * stride
      let w = sink.count * 3
      if (allFloat) {
        float32Triples(view, first, stride, n, x.offset, y.offset, z.offset, le, p, w)
      } else {
        for (let i = 0, b = first; i < n; i++, b += stride, w += 3) {
          p[w] = readScalar(view, b + x.offset, x.type, le)
          p[w + 1] = readScalar(view, b + y.offset, y.type, le)
          p[w + 2] = readScalar(view, b + z.offset, z.type, le)
        }
      }
      if (this.colors && this.colorsAreBytes) {
        const [r, g, b] = this.colors
        byteTriples(view, first, stride, n, r.offset, g.offset, b.offset, sink.colors!, sink.count * 3)
      } else if (this.colors) {
        const c = sink.colors!
        for (let k = 0; k < 3; k++) {
          const channel = this.colors[k] as Wanted
          const o = channel.offset
          const t = channel.type
          let j = sink.count * 3 + k
          for (let i = 0, b = first; i < n; i++, b += stride, j += 3) {
            c[j] = colorChannel(readScalar(view, b + o, t, le), t)
          }
        }
      }
      if (this.intensity) {
        const values = sink.intensities!
        const o = this.intensity.offset
        const t = this.intensity.type
        let j = sink.count
        for (let i = 0, b = first; i < n; i++, b += stride, j++) values[j] = readScalar(view, b + o, t, le)
      }
      sink.commit(n)
      done += n
    }
  }

  /** One vertex record with list properties: find the property offsets, then read as above. */
  private readonly decodeVariableVertex = (view: DataView, offset: number): void => {
    const vertex = this.elements[this.vertexIndex] as PlyElement
    this.walk(vertex, view, offset, view.byteLength, this.offsets)
    const sink = this.sink!
    const le = this.littleEndian
    const at = (w: Wanted): number => readScalar(view, (this.offsets[w.index] as number), w.type, le)
    const [x, y, z] = this.position!
    const w = sink.count * 3
    sink.positions[w] = at(x)
    sink.positions[w + 1] = at(y)
    sink.positions[w + 2] = at(z)
    if (this.colors) {
      for (let k = 0; k < 3; k++) {
        const channel = this.colors[k] as Wanted
        sink.colors![w + k] = colorChannel(at(channel), channel.type)
      }
    }
    if (this.intensity) sink.intensities![sink.count] = at(this.intensity)
    sink.commit(1)
  }

  private measureFor(element: PlyElement) {
    return (view: DataView, offset: number, end: number): number => this.walk(element, view, offset, end, null)
  }

  /**
   * Walks one record with list properties; returns its length, or -1 when bytes up to `end` do not
   * hold it all. Fills `offsets` (absolute byte offsets of each property) when given.
   */
  private walk(element: PlyElement, view: DataView, offset: number, end: number, offsets: number[] | null): number {
    let pos = offset
    const le = this.littleEndian
    const props = element.properties
    for (let k = 0; k < props.length; k++) {
      const p = props[k]!
      if (offsets) offsets[k] = pos
      if (p.countType) {
        const countCode = PLY_SCALAR_CODE[p.countType]
        const countSize = SCALAR_SIZE[countCode] as number
        if (pos + countSize > end) return -1
        const items = readScalar(view, pos, countCode, le)
        if (items < 0) throw errorAtByte(pos, `list '${p.name}' has a negative length (${items})`)
        pos += countSize + items * (SCALAR_SIZE[PLY_SCALAR_CODE[p.type]] as number)
      } else {
        pos += SCALAR_SIZE[PLY_SCALAR_CODE[p.type]] as number
      }
      if (pos > end) return -1
    }
    return pos - offset
  }

  private asciiLine(bytes: Uint8Array, start: number, end: number, line: number): void {
    let s = start
    while (s < end && isSpace(bytes[s] as number)) s++
    if (s === end) return
    if (this.elementIndex >= this.elements.length) {
      throw errorAtLine(line, `data continues after ${this.lastElementText()} (the header's counts disagree with the body)`)
    }
    const element = this.elements[this.elementIndex] as PlyElement
    if (this.elementIndex === this.vertexIndex) this.asciiVertex(element, bytes, s, end, line)
    else this.asciiSkip(element, bytes, s, end, line)
    this.recordsDone++
    if (this.recordsDone === element.count) this.nextElement(0)
  }

  private asciiVertex(element: PlyElement, bytes: Uint8Array, start: number, end: number, line: number): void {
    const props = element.properties
    const sink = this.sink!
    const scanner = this.scanner
    const w = sink.count * 3
    let pos = start
    let found = 0
    const [x, y, z] = this.position!
    for (let k = 0; k < props.length; k++) {
      const p = props[k]!
      // Next token.
      while (pos < end && isSpace(bytes[pos] as number)) pos++
      if (pos >= end) throw this.countError(element, found, line)
      let stop = pos
      while (stop < end && !isSpace(bytes[stop] as number)) stop++
      if (!scanner.read(bytes, pos, stop)) throw notANumber(bytes, pos, stop, line, p.name)
      found++
      pos = stop
      if (p.countType) {
        const items = scanner.value
        if (!Number.isInteger(items) || items < 0) {
          throw errorAtLine(line, `list '${p.name}' length ${items} is not a whole number`)
        }
        for (let item = 0; item < items; item++) {
          while (pos < end && isSpace(bytes[pos] as number)) pos++
          if (pos >= end) throw this.countError(element, found, line)
          while (pos < end && !isSpace(bytes[pos] as number)) pos++
          found++
        }
        continue
      }
      const value = scanner.value
      if (k === x.index) sink.positions[w] = value
      else if (k === y.index) sink.positions[w + 1] = value
      else if (k === z.index) sink.positions[w + 2] = value
      if (this.colors) {
        for (let c = 0; c < 3; c++) {
          const channel = this.colors[c] as Wanted
          if (k === channel.index) sink.colors![w + c] = colorChannel(value, channel.type)
        }
      }
      if (this.intensity && k === this.intensity.index) sink.intensities![sink.count] = value
    }
    while (pos < end && isSpace(bytes[pos] as number)) pos++
    if (pos < end) throw this.countError(element, found + countTokens(bytes, pos, end), line)
    const names = ['x', 'y', 'z']
    for (let a = 0; a < 3; a++) {
      const v = sink.positions[w + a] as number
      if (v - v !== 0) {
        throw errorAtLine(
          line,
          `point ${sink.total + 1} has a coordinate that is not a finite number (${names[a]} = ${v})`,
        )
      }
    }
    sink.commit(1)
  }

  /** Other elements in ascii: one line a record, values only counted when there are no lists. */
  private asciiSkip(element: PlyElement, bytes: Uint8Array, start: number, end: number, line: number): void {
    if (element.properties.some((p) => p.countType)) return
    const found = countTokens(bytes, start, end)
    if (found !== element.properties.length) throw this.countError(element, found, line)
  }

  private countError(element: PlyElement, found: number, line: number) {
    const names = element.properties.map((p) => p.name).join(' ')
    const lists = element.properties.some((p) => p.countType)
    const expected = lists ? `the values of element ${element.name} (${names})` : `${element.properties.length} numbers (${names})`
    return errorAtLine(line, `expected ${expected}, found ${found}`)
  }
}

const skipRecords = (): void => {}

function isSpace(c: number): boolean {
  return c === 32 || c === 9 || c === 13
}

function countTokens(bytes: Uint8Array, start: number, end: number): number {
  let count = 0
  let pos = start
  while (pos < end) {
    while (pos < end && isSpace(bytes[pos] as number)) pos++
    if (pos >= end) break
    count++
    while (pos < end && !isSpace(bytes[pos] as number)) pos++
  }
  return count
}

const PLY_MAGIC = [112, 108, 121] // "ply"
