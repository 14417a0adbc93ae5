import { errorInHeader } from './errors'
import {
  FLOAT32,
  FLOAT64,
  INT16,
  INT32,
  INT8,
  SCALAR_SIZE,
  UINT16,
  UINT32,
  UINT8,
  type ScalarCode,
} from './scalarTypes'
import { clip } from './textUtil'
import type { PlyElement, PlyHeaderInfo, PlyScalarType } from './types'

/**
 * The PLY header (Turk 1994, "The PLY Polygon File Format"): `ply`, `format <encoding> 1.0`, then
 * `comment` / `obj_info` lines, `element <name> <count>` each followed by its `property <type> <name>` or
 * `property list <count type> <item type> <name>` lines, and `end_header`.
 */

const TYPES: Record<string, PlyScalarType> = {
  char: 'int8',
  int8: 'int8',
  uchar: 'uint8',
  uint8: 'uint8',
  short: 'int16',
  int16: 'int16',
  ushort: 'uint16',
  uint16: 'uint16',
  int: 'int32',
  int32: 'int32',
  uint: 'uint32',
  uint32: 'uint32',
  float: 'float32',
  float32: 'float32',
  double: 'float64',
  float64: 'float64',
}

export const PLY_SCALAR_CODE: Record<PlyScalarType, ScalarCode> = {
  int8: INT8,
  uint8: UINT8,
  int16: INT16,
  uint16: UINT16,
  int32: INT32,
  uint32: UINT32,
  float32: FLOAT32,
  float64: FLOAT64,
}

export const PLY_ENCODINGS = ['ascii', 'binary_little_endian', 'binary_big_endian'] as const

/** Collects header lines one at a time; `finish()` checks the whole. */
export class PlyHeaderParser {
  encoding: PlyHeaderInfo['encoding'] | null = null
  readonly elements: PlyElement[] = []
  readonly comments: string[] = []
  /** Header line that declared each element, for messages. */
  readonly elementLines: number[] = []

  /** Returns true at end_header. */
  line(text: string, line: number): boolean {
    const words = text.trim().split(/\s+/)
    const keyword = words[0] ?? ''
    if (line === 1) {
      if (text.trim() !== 'ply') {
        throw errorInHeader(`a PLY file starts with the line 'ply', this one with '${clip(text)}'`, { line })
      }
      return false
    }
    switch (keyword) {
      case '':
        return false
      case 'format':
        this.format(words, line)
        return false
      case 'comment':
      case 'obj_info':
        this.comments.push(text.trim().slice(keyword.length).trim())
        return false
      case 'element':
        this.element(words, line)
        return false
      case 'property':
        this.property(words, line)
        return false
      case 'end_header':
        return true
      default:
        throw errorInHeader(`'${clip(keyword)}' is not a PLY header keyword`, { line })
    }
  }

  private format(words: string[], line: number): void {
    if (this.encoding) throw errorInHeader('a second format line', { line })
    const encoding = words[1] ?? ''
    if (!(PLY_ENCODINGS as readonly string[]).includes(encoding)) {
      throw errorInHeader(
        `format '${clip(encoding)}' is not one of ascii, binary_little_endian, binary_big_endian`,
        { line },
      )
    }
    if (words[2] !== '1.0' && words[2] !== '1') {
      throw errorInHeader(`format version '${clip(words[2] ?? '')}' is not 1.0`, { line })
    }
    this.encoding = encoding as PlyHeaderInfo['encoding']
  }

  private element(words: string[], line: number): void {
    const name = words[1]
    const countText = words[2] ?? ''
    if (!name || words.length !== 3) throw errorInHeader(`expected 'element <name> <count>'`, { line })
    if (!/^\d+$/.test(countText) || !Number.isSafeInteger(Number(countText))) {
      throw errorInHeader(`element ${name} count '${clip(countText)}' is not a whole number`, { line })
    }
    this.elements.push({ name, count: Number(countText), properties: [] })
    this.elementLines.push(line)
  }

  private property(words: string[], line: number): void {
    const element = this.elements[this.elements.length - 1]
    if (!element) throw errorInHeader('a property before any element', { line })
    if (words[1] === 'list') {
      if (words.length !== 5) throw errorInHeader(`expected 'property list <count type> <item type> <name>'`, { line })
      const countType = scalarType(words[2] ?? '', line)
      const type = scalarType(words[3] ?? '', line)
      if (countType === 'float32' || countType === 'float64') {
        throw errorInHeader(`list count type '${words[2]}' is not an integer type`, { line })
      }
      element.properties.push({ name: words[4] as string, type, countType })
      return
    }
    if (words.length !== 3) throw errorInHeader(`expected 'property <type> <name>'`, { line })
    element.properties.push({ name: words[2] as string, type: scalarType(words[1] ?? '', line) })
  }
}

function scalarType(word: string, line: number): PlyScalarType {
  const type = TYPES[word]
  if (!type) throw errorInHeader(`property type '${clip(word)}' is not a PLY type`, { line })
  return type
}

export function plyRecordMinLength(element: PlyElement): number {
  let length = 0
  for (const p of element.properties) {
    length += SCALAR_SIZE[PLY_SCALAR_CODE[p.countType ?? p.type]] as number
  }
  return length
}

/** The record length when the element has no list properties, else 0. */
export function plyFixedLength(element: PlyElement): number {
  return element.properties.some((p) => p.countType) ? 0 : plyRecordMinLength(element)
}
