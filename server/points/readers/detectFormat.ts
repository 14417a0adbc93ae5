import { errorAtByte, errorAtLine } from './errors'
import { STATION_LOG_MAGIC } from './stationLogHeader'
import { clip, columnName, latin1 } from './textUtil'
import type { ScanFormat } from './types'

/**
 * Decides a file's format from its first bytes (pass at least SNIFF_BYTES, or the whole file when it is
 * smaller) and checks that its name agrees. The content decides; the extension may only confirm it:
 * a `.ply` whose bytes start like LAS is refused rather than guessed. `.las` and `.laz` are one family
 * (the content says whether the points are compressed), and the text extensions (.xyz .csv .txt .asc
 * .log) take both numeric columns and station logs. A name without a known extension is not checked.
 */

export const SNIFF_BYTES = 4096

type Content = ScanFormat

const EXTENSIONS: Record<string, readonly Content[]> = {
  ply: ['ply'],
  las: ['las', 'laz'],
  laz: ['laz', 'las'],
  pcd: ['pcd'],
  e57: ['e57'],
  xyz: ['xyz', 'station-log'],
  csv: ['xyz', 'station-log'],
  txt: ['xyz', 'station-log'],
  asc: ['xyz', 'station-log'],
  log: ['station-log', 'xyz'],
}

const DESCRIPTION: Record<Content, string> = {
  ply: 'a PLY file',
  las: 'a LAS file',
  laz: 'a LAZ file',
  pcd: 'a PCD file',
  e57: 'an E57 file',
  'station-log': 'a station log',
  xyz: 'text in numeric columns',
}

/** Other files people upload by mistake, named so the message helps. */
const FOREIGN: { magic: number[]; what: string }[] = [
  { magic: [0x50, 0x4b, 0x03, 0x04], what: 'a ZIP archive' },
  { magic: [0x1f, 0x8b], what: 'a gzip archive' },
  { magic: [0x25, 0x50, 0x44, 0x46], what: 'a PDF document' },
  { magic: [0x89, 0x50, 0x4e, 0x47], what: 'a PNG image' },
  { magic: [0xff, 0xd8, 0xff], what: 'a JPEG image' },
  { magic: [0x37, 0x7a, 0xbc, 0xaf], what: 'a 7z archive' },
]

export function fileExtension(fileName: string): string {
  const base = fileName.split(/[\\/]/).pop() ?? ''
  const dot = base.lastIndexOf('.')
  return dot > 0 ? base.slice(dot + 1).toLowerCase() : ''
}

export function detectFormat(firstBytes: Uint8Array, fileName: string): ScanFormat {
  if (firstBytes.length === 0) throw errorAtByte(0, 'the file is empty')
  const extension = fileExtension(fileName)
  const expected = EXTENSIONS[extension]
  const content = sniff(firstBytes, expected)
  if (expected && !expected.includes(content)) {
    throw errorAtByte(0, `file is named .${extension} but its content starts like ${DESCRIPTION[content]}`)
  }
  return content
}

/** The line 'ply', which writers may follow with spaces or tabs before its line end. */
function isPlyMagic(bytes: Uint8Array): boolean {
  if (!startsWith(bytes, 'ply')) return false
  let at = 3
  while (at < bytes.length && (bytes[at] === 32 || bytes[at] === 9)) at++
  return at === bytes.length || bytes[at] === 10 || bytes[at] === 13
}

function startsWith(bytes: Uint8Array, text: string, at = 0): boolean {
  if (bytes.length < at + text.length) return false
  for (let i = 0; i < text.length; i++) if (bytes[at + i] !== text.charCodeAt(i)) return false
  return true
}

function sniff(bytes: Uint8Array, expected: readonly Content[] | undefined): Content {
  if (isPlyMagic(bytes)) return 'ply'
  if (startsWith(bytes, 'LASF')) {
    if (bytes.length > 104) return ((bytes[104] as number) & 0xc0) !== 0 ? 'laz' : 'las'
    return expected?.[0] === 'laz' ? 'laz' : 'las'
  }
  if (startsWith(bytes, 'ASTM-E57')) return 'e57'
  for (const foreign of FOREIGN) {
    if (foreign.magic.every((b, i) => bytes[i] === b)) {
      throw errorAtByte(0, `the content is ${foreign.what}, not a point cloud`)
    }
  }
  // PCD's header is text even when its body is binary: judge the part before the first NUL.
  if (looksLikePcdHeader(bytes)) return 'pcd'
  if (!looksLikeText(bytes)) {
    const head = Array.from(bytes.subarray(0, 4), (b) => `0x${b.toString(16).padStart(2, '0')}`).join(' ')
    throw errorAtByte(0, `the content is binary data that is not a point format Spanmark reads (it starts ${head})`)
  }
  return sniffText(bytes)
}

/** The first line that is not blank or a comment starts with VERSION or FIELDS, or a '# .PCD' comment comes first. */
function looksLikePcdHeader(bytes: Uint8Array): boolean {
  const nul = bytes.indexOf(0)
  const text = latin1(bytes, 0, Math.min(nul < 0 ? bytes.length : nul, 2048))
  for (const raw of text.split('\n').slice(0, 30)) {
    const line = raw.trim()
    if (/^# *\.PCD\b/i.test(line)) return true
    if (line === '' || line.startsWith('#')) continue
    return /^(VERSION|FIELDS)\s/.test(line)
  }
  return false
}

/** No NUL bytes and hardly any other control characters. */
function looksLikeText(bytes: Uint8Array): boolean {
  let control = 0
  for (const b of bytes) {
    if (b === 0) return false
    if (b < 32 && b !== 9 && b !== 10 && b !== 13 && b !== 12) control++
  }
  return control <= bytes.length / 100
}

function sniffText(bytes: Uint8Array): Content {
  let start = 0
  if (bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) start = 3
  const text = latin1(bytes, start, bytes.length)
  const lines = text.split('\n')
  // The last line may be cut by the sniff window; judge it only if it is the only one.
  if (lines.length > 1 && !text.endsWith('\n')) lines.pop()
  const first = lines.findIndex((l) => l.trim() !== '')
  if (first < 0) throw errorAtLine(lines.length, 'the file holds only blank lines, so no points')
  if ((lines[first] ?? '').trim().startsWith(STATION_LOG_MAGIC)) return 'station-log'
  let sawHeaderRow = false
  let firstMeaningful = -1
  for (let i = first; i < lines.length && i < first + 200; i++) {
    const line = (lines[i] ?? '').trim()
    if (line === '' || line.startsWith('#') || line.startsWith('//')) continue
    if (firstMeaningful < 0) firstMeaningful = i
    const fields = splitFields(line)
    const numeric = fields.every((f) => /^[+-]?(\d+[.,]?\d*|[.,]\d+)([eE][+-]?\d+)?$|^[+-]?(nan|inf|infinity)$/i.test(f))
    if (numeric && fields.length >= 3) return 'xyz'
    const names = fields.map(columnName)
    if (!sawHeaderRow && i === firstMeaningful && ['x', 'y', 'z'].every((n) => names.includes(n))) {
      sawHeaderRow = true
      continue
    }
    break
  }
  // Only comments so far (or a header row): columns it is; the reader will tell if no points follow.
  if (sawHeaderRow || firstMeaningful < 0) return 'xyz'
  const line = firstMeaningful >= 0 ? firstMeaningful : first
  throw errorAtLine(
    line + 1,
    `the content is text but not points in numeric columns ('${clip((lines[line] ?? '').trim())}')`,
  )
}

function splitFields(line: string): string[] {
  if (line.includes('\t')) return line.split('\t').map((f) => f.trim()).filter((f) => f !== '')
  if (line.includes(';')) return line.split(';').map((f) => f.trim()).filter((f) => f !== '')
  if (line.includes(',')) return line.split(',').map((f) => f.trim()).filter((f) => f !== '')
  return line.split(/\s+/)
}
