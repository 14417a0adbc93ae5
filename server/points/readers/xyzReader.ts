import { errorAtLine, type ScanErrorLocation } from './errors'
import { LineSplitter } from './lineSplitter'
import { NumberScanner } from './numberScanner'
import { ReaderBase } from './readerBase'
import { clip, columnName, latin1, notANumber } from './textUtil'
import type { ReaderOptions, TextColumnsHeaderInfo } from './types'

/**
 * ASCII point columns (.xyz, .csv, .txt). There is no standard, so the reader decides from the first
 * line that is not blank or a comment (# or //):
 * - the delimiter: tab if the line has one, else ';', else ',', else runs of spaces. With ';' between
 *   columns a ',' inside numbers is read as the decimal mark;
 * - a header row (any field not a number) names the columns: x y z, r/red g/green b/blue,
 *   i/intensity/scalar_intensity; other names are carried but not read. x, y and z must be there;
 * - without a header the count decides: 3 = x y z, 4 = x y z intensity, 6 = x y z r g b,
 *   7 = x y z r g b intensity; any other count needs a header row.
 * Every data line must then have the same number of columns. Colours are 0-255.
 */

type Role = 'x' | 'y' | 'z' | 'r' | 'g' | 'b' | 'intensity' | ''

const ROLE_BY_NAME: Record<string, Role> = {
  x: 'x',
  y: 'y',
  z: 'z',
  r: 'r',
  red: 'r',
  g: 'g',
  green: 'g',
  b: 'b',
  blue: 'b',
  i: 'intensity',
  intensity: 'intensity',
  scalar_intensity: 'intensity',
}

const ROLES_BY_COUNT: Record<number, Role[]> = {
  3: ['x', 'y', 'z'],
  4: ['x', 'y', 'z', 'intensity'],
  6: ['x', 'y', 'z', 'r', 'g', 'b'],
  7: ['x', 'y', 'z', 'r', 'g', 'b', 'intensity'],
}

const TAB = 9
const SPACE = 32
const COMMA = 44
const SEMICOLON = 59
const HASH = 35
const SLASH = 47

/** Role codes per column for the hot loop: 0-2 position, 3-5 colour, 6 intensity, -1 not read. */
const ROLE_CODE: Record<Role, number> = { x: 0, y: 1, z: 2, r: 3, g: 4, b: 5, intensity: 6, '': -1 }

export class XyzReader extends ReaderBase {
  readonly format = 'xyz' as const
  declare header: TextColumnsHeaderInfo | null
  private readonly lines = new LineSplitter((b, s, e, l) => this.onLine(b, s, e, l))
  private readonly scanner = new NumberScanner()
  private delimiter = SPACE
  private codes: Int8Array = new Int8Array(0)
  private labels: string[] = []
  private columnCount = 0
  private decimalUndecided = false
  private readonly values = new Float64Array(7)

  constructor(options: ReaderOptions) {
    super(options)
  }

  protected consume(chunk: Uint8Array): void {
    this.lines.push(chunk)
  }

  protected finish(): void {
    this.lines.end()
  }

  protected override endLocation(): ScanErrorLocation {
    return { line: Math.max(1, this.lines.line) }
  }

  protected override noPointsDetail(): string {
    return this.header ? ' (no data lines after the header row)' : ' (no data lines)'
  }

  private onLine(bytes: Uint8Array, start: number, end: number, line: number): void {
    let s = start
    if (line === 1 && end - s >= 3 && bytes[s] === 0xef && bytes[s + 1] === 0xbb && bytes[s + 2] === 0xbf) s += 3
    while (s < end && (bytes[s] === SPACE || bytes[s] === TAB)) s++
    if (s === end) return
    const first = bytes[s]
    if (first === SLASH && bytes[s + 1] === SLASH && !this.header) {
      // Some exporters write the header row as a '//' comment: take it when it names x, y and z.
      const names = splitText(latin1(bytes, s + 2, end), delimiterOf(latin1(bytes, s + 2, end))).map(columnName)
      if (['x', 'y', 'z'].every((n) => names.includes(n))) this.setUp(bytes, s + 2, end, line)
      return
    }
    if (first === HASH || (first === SLASH && bytes[s + 1] === SLASH)) return
    if (!this.header) {
      if (this.setUp(bytes, s, end, line)) return
    } else if (this.decimalUndecided) {
      this.decideDecimal(splitText(latin1(bytes, s, end), SEMICOLON))
    }
    this.dataLine(bytes, s, end, line)
  }

  /** Reads the layout from the first line; returns true when that line was a header row. */
  private setUp(bytes: Uint8Array, start: number, end: number, line: number): boolean {
    const text = latin1(bytes, start, end)
    const delimiter = delimiterOf(text)
    this.delimiter = delimiter
    const fields = splitText(text, delimiter)
    const decimalComma = this.decideDecimal(delimiter === SEMICOLON ? fields : [])
    const numeric = fields.every((f) => {
      const encoded = Uint8Array.from(f, (c) => c.charCodeAt(0) & 0xff)
      return this.scanner.read(encoded, 0, encoded.length)
    })
    let roles: Role[]
    let headerRow = false
    if (numeric) {
      const byCount = ROLES_BY_COUNT[fields.length]
      if (!byCount) {
        if (fields.length < 3) {
          throw errorAtLine(line, `expected 3 numbers (x y z), found ${fields.length}`)
        }
        throw errorAtLine(
          line,
          `${fields.length} columns: add a header row that names them (x y z, r g b, intensity)`,
        )
      }
      roles = byCount
      this.labels = byCount.map((r) => r || '-')
    } else {
      headerRow = true
      // The decimal mark shows only in numbers: decide on the first data line.
      this.decimalUndecided = delimiter === SEMICOLON
      const names = fields.map(columnName)
      roles = names.map((n) => ROLE_BY_NAME[n] ?? '')
      this.labels = names
      if (!roles.includes('x') || !roles.includes('y') || !roles.includes('z')) {
        throw errorAtLine(
          line,
          `neither numbers nor a header row naming x, y and z columns, so not points ('${clip(text)}')`,
        )
      }
    }
    const hasColor = roles.includes('r') && roles.includes('g') && roles.includes('b')
    const hasIntensity = roles.includes('intensity')
    // Keep only the first column of each role; drop colour unless all three are there.
    const seen = new Set<Role>()
    this.codes = Int8Array.from(roles, (role) => {
      if (!role || seen.has(role) || (!hasColor && (role === 'r' || role === 'g' || role === 'b'))) return -1
      seen.add(role)
      return ROLE_CODE[role]
    })
    this.columnCount = fields.length
    this.header = {
      format: 'xyz',
      delimiter: ({ [TAB]: 'tab', [SEMICOLON]: 'semicolon', [COMMA]: 'comma' } as const)[delimiter as 9] ?? 'space',
      decimalComma,
      columns: roles.map((r, i) => ((this.codes[i] as number) >= 0 ? r : '')),
      headerRow,
      hasColor,
      hasIntensity,
      hasUncertainty: false,
      declaredPointCount: null,
    }
    this.createSink({ color: hasColor, intensity: hasIntensity, uncertainty: false }, () => ({ line: this.lines.line }))
    return headerRow
  }

  /**
   * With ';' between columns, ',' is the decimal mark when the numbers have commas and no points. A line
   * of whole numbers shows neither, so the choice waits for the first line that has a mark.
   */
  private decideDecimal(fields: string[]): boolean {
    const comma = fields.some((f) => f.includes(',')) && !fields.some((f) => f.includes('.'))
    const evidence = fields.some((f) => f.includes(',') || f.includes('.'))
    this.scanner.decimal = comma ? COMMA : 46
    if (this.header) this.header.decimalComma = comma
    this.decimalUndecided = this.delimiter === SEMICOLON && !evidence
    return comma
  }

  private dataLine(bytes: Uint8Array, start: number, end: number, line: number): void {
    const sink = this.sink!
    const codes = this.codes
    const scanner = this.scanner
    const values = this.values
    const delimiter = this.delimiter
    const columns = this.columnCount
    let pos = start
    let column = 0
    for (;;) {
      let a = pos
      let b: number
      let last: boolean
      if (delimiter === SPACE) {
        b = a
        while (b < end && bytes[b] !== SPACE && bytes[b] !== TAB) b++
        pos = b
        while (pos < end && (bytes[pos] === SPACE || bytes[pos] === TAB)) pos++
        last = pos >= end
      } else {
        let stop = bytes.indexOf(delimiter, a)
        if (stop < 0 || stop > end) stop = end
        last = stop === end
        pos = stop + 1
        b = stop
        while (a < b && (bytes[a] === SPACE || bytes[a] === TAB)) a++
        while (b > a && (bytes[b - 1] === SPACE || bytes[b - 1] === TAB)) b--
        // "1,2,3," : a trailing delimiter does not open a column.
        if (last && a === b && column > 0) break
      }
      if (column < columns) {
        const code = codes[column] as number
        if (code >= 0) {
          if (a === b) throw errorAtLine(line, `column ${column + 1} (${this.labels[column]}) is empty`)
          if (!scanner.read(bytes, a, b)) {
            throw notANumber(bytes, a, b, line, `column ${column + 1}, ${this.labels[column]}`)
          }
          values[code] = scanner.value
        }
      }
      column++
      if (last) break
    }
    if (column !== columns) {
      throw errorAtLine(line, `expected ${columns} numbers (${this.labels.join(' ')}), found ${column}`)
    }
    const x = values[0] as number
    const y = values[1] as number
    const z = values[2] as number
    if (x - x !== 0 || y - y !== 0 || z - z !== 0) {
      const axis = x - x !== 0 ? 'x' : y - y !== 0 ? 'y' : 'z'
      const value = axis === 'x' ? x : axis === 'y' ? y : z
      throw errorAtLine(line, `point ${sink.total + 1} has a coordinate that is not a finite number (${axis} = ${value})`)
    }
    const w = sink.count * 3
    sink.positions[w] = x
    sink.positions[w + 1] = y
    sink.positions[w + 2] = z
    if (sink.colors) {
      for (let k = 0; k < 3; k++) {
        const v = values[3 + k] as number
        if (!(v >= 0 && v <= 255)) {
          throw errorAtLine(line, `colour value ${v} (${'rgb'[k]}) is outside 0-255`)
        }
        sink.colors[w + k] = Math.round(v)
      }
    }
    if (sink.intensities) sink.intensities[sink.count] = values[6] as number
    sink.commit(1)
  }
}

function splitText(text: string, delimiter: number): string[] {
  if (delimiter === SPACE) return text.trim().split(/[ \t]+/)
  const parts = text.split(String.fromCharCode(delimiter)).map((p) => p.trim())
  if (parts.length > 1 && parts[parts.length - 1] === '') parts.pop()
  return parts
}

function delimiterOf(text: string): number {
  return text.includes('\t') ? TAB : text.includes(';') ? SEMICOLON : text.includes(',') ? COMMA : SPACE
}
