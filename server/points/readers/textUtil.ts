import { errorAtLine, type ScanFormatError } from './errors'

/** Small helpers for text formats: bytes to short strings for messages and header lines. */

export function latin1(bytes: Uint8Array, start: number, end: number): string {
  let text = ''
  for (let i = start; i < end; i++) text += String.fromCharCode(bytes[i] as number)
  return text
}

/** Shortens user text quoted in a message. */
export function clip(text: string, length = 40): string {
  return text.length > length ? `${text.slice(0, length)}...` : text
}

export function notANumber(bytes: Uint8Array, start: number, end: number, line: number, column: string): ScanFormatError {
  return errorAtLine(line, `'${clip(latin1(bytes, start, Math.min(end, start + 40)), 24)}' is not a number (${column})`)
}

/** A header field as a column name: unquoted, lower case, without a unit such as "[m]" or "(mm)". */
export function columnName(field: string): string {
  return field
    .trim()
    .replace(/^["']|["']$/g, '')
    .replace(/\s*[[(][^\])]*[\])]$/, '')
    .trim()
    .toLowerCase()
}
