/**
 * The one error the readers throw for bad input. Its message always starts with where the problem is:
 * `line 17: ...` (text formats, 1-based file lines), `byte 1204: ...` (0-based offset into the file) or
 * `header: ...` / `header line 5: ...` / `header field 'x scale': ...`, so a user can find it in the file.
 * E57 adds `page 3 (byte 4092): ...` (a 0-based physical page and the file offset) and
 * `XML path /data3D/0/points: ...` (the element's path in the file's XML section; `field` holds it).
 */
export interface ScanErrorLocation {
  line?: number
  byte?: number
  field?: string
}

export class ScanFormatError extends Error {
  readonly line: number | undefined
  readonly byte: number | undefined
  readonly field: string | undefined

  constructor(message: string, location: ScanErrorLocation = {}) {
    super(message)
    this.name = 'ScanFormatError'
    this.line = location.line
    this.byte = location.byte
    this.field = location.field
  }
}

export function errorAtLine(line: number, message: string): ScanFormatError {
  return new ScanFormatError(`line ${line}: ${message}`, { line })
}

export function errorAtByte(byte: number, message: string): ScanFormatError {
  return new ScanFormatError(`byte ${byte}: ${message}`, { byte })
}

/** A header problem; `field` names the header field or keyword, `line` the header's line for text headers. */
export function errorInHeader(message: string, where: { field?: string; line?: number } = {}): ScanFormatError {
  const prefix =
    where.line !== undefined ? `header line ${where.line}` : where.field ? `header field '${where.field}'` : 'header'
  return new ScanFormatError(`${prefix}: ${message}`, where)
}
