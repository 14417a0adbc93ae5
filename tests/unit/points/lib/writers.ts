/**
 * Small file writers for the reader tests. Each writes its format from the format's own description
 * (named beside each), independently of the readers, so that a reader and a writer sharing a mistake
 * is unlikely; the PLY files are also read by three's PLYLoader, the LAS files by @loaders.gl/las.
 */

export interface TestCloud {
  positions: ArrayLike<number>
  colors?: ArrayLike<number>
  intensities?: ArrayLike<number>
  /** Triangles (vertex indices), written as a face element after the vertices. */
  faces?: ArrayLike<number>
}

const encoder = new TextEncoder()

export function concatBytes(parts: Uint8Array[]): Uint8Array {
  const total = parts.reduce((n, p) => n + p.length, 0)
  const out = new Uint8Array(total)
  let at = 0
  for (const p of parts) {
    out.set(p, at)
    at += p.length
  }
  return out
}

export type PlyEncoding = 'ascii' | 'binary_little_endian' | 'binary_big_endian'

export interface PlyWriteOptions {
  /** PLY type names for x y z (default float). */
  positionType?: 'float' | 'double' | 'float32' | 'float64' | 'int' | 'short'
  colorType?: 'uchar' | 'uint8' | 'ushort'
  comments?: string[]
  /** An extra element written before the vertices, to check it is skipped. */
  leadingElement?: boolean
  lineEnding?: '\n' | '\r\n'
}

const PLY_SIZE: Record<string, number> = {
  char: 1, uchar: 1, int8: 1, uint8: 1, short: 2, ushort: 2, int16: 2, uint16: 2,
  int: 4, uint: 4, int32: 4, uint32: 4, float: 4, float32: 4, double: 8, float64: 8,
}

function putPly(view: DataView, at: number, type: string, value: number, le: boolean): number {
  switch (type) {
    case 'char': case 'int8': view.setInt8(at, value); break
    case 'uchar': case 'uint8': view.setUint8(at, value); break
    case 'short': case 'int16': view.setInt16(at, value, le); break
    case 'ushort': case 'uint16': view.setUint16(at, value, le); break
    case 'int': case 'int32': view.setInt32(at, value, le); break
    case 'uint': case 'uint32': view.setUint32(at, value, le); break
    case 'float': case 'float32': view.setFloat32(at, value, le); break
    case 'double': case 'float64': view.setFloat64(at, value, le); break
    default: throw new Error(type)
  }
  return at + (PLY_SIZE[type] as number)
}

/** PLY per Turk 1994: header lines, then the elements in header order. */
export function writePly(cloud: TestCloud, encoding: PlyEncoding, options: PlyWriteOptions = {}): Uint8Array {
  const n = cloud.positions.length / 3
  const pt = options.positionType ?? 'float'
  const ct = options.colorType ?? 'uchar'
  const eol = options.lineEnding ?? '\n'
  const faces = cloud.faces ? cloud.faces.length / 3 : 0
  const header = ['ply', `format ${encoding} 1.0`, ...(options.comments ?? []).map((c) => `comment ${c}`)]
  if (options.leadingElement) header.push('element camera 1', 'property float focal', 'property list uchar int tags')
  header.push(`element vertex ${n}`, `property ${pt} x`, `property ${pt} y`, `property ${pt} z`)
  if (cloud.colors) header.push(`property ${ct} red`, `property ${ct} green`, `property ${ct} blue`)
  if (cloud.intensities) header.push('property float intensity')
  if (faces) header.push(`element face ${faces}`, 'property list uchar int vertex_indices')
  header.push('end_header')
  const head = encoder.encode(header.join(eol) + eol)
  if (encoding === 'ascii') {
    const lines: string[] = []
    if (options.leadingElement) lines.push('35.5 2 7 9')
    for (let i = 0; i < n; i++) {
      const v = [cloud.positions[i * 3], cloud.positions[i * 3 + 1], cloud.positions[i * 3 + 2]].map(String)
      if (cloud.colors) for (let k = 0; k < 3; k++) v.push(String(cloud.colors[i * 3 + k]))
      if (cloud.intensities) v.push(String(cloud.intensities[i]))
      lines.push(v.join(' '))
    }
    for (let f = 0; f < faces; f++) lines.push(`3 ${cloud.faces![f * 3]} ${cloud.faces![f * 3 + 1]} ${cloud.faces![f * 3 + 2]}`)
    return concatBytes([head, encoder.encode(lines.join(eol) + eol)])
  }
  const le = encoding === 'binary_little_endian'
  const vertexSize = 3 * (PLY_SIZE[pt] as number) + (cloud.colors ? 3 * (PLY_SIZE[ct] as number) : 0) + (cloud.intensities ? 4 : 0)
  const leading = options.leadingElement ? 4 + 1 + 2 * 4 : 0
  const body = new Uint8Array(leading + n * vertexSize + faces * 13)
  const view = new DataView(body.buffer)
  let at = 0
  if (options.leadingElement) {
    at = putPly(view, at, 'float', 35.5, le)
    at = putPly(view, at, 'uchar', 2, le)
    at = putPly(view, at, 'int', 7, le)
    at = putPly(view, at, 'int', 9, le)
  }
  for (let i = 0; i < n; i++) {
    for (let k = 0; k < 3; k++) at = putPly(view, at, pt, cloud.positions[i * 3 + k] as number, le)
    if (cloud.colors) for (let k = 0; k < 3; k++) at = putPly(view, at, ct, cloud.colors[i * 3 + k] as number, le)
    if (cloud.intensities) at = putPly(view, at, 'float', cloud.intensities[i] as number, le)
  }
  for (let f = 0; f < faces; f++) {
    at = putPly(view, at, 'uchar', 3, le)
    for (let k = 0; k < 3; k++) at = putPly(view, at, 'int', cloud.faces![f * 3 + k] as number, le)
  }
  return concatBytes([head, body])
}

/** ASCII columns, one point a line. */
export function writeXyz(
  cloud: TestCloud,
  options: { delimiter?: string; headerRow?: string; comments?: string[]; lineEnding?: string } = {},
): Uint8Array {
  const d = options.delimiter ?? ' '
  const eol = options.lineEnding ?? '\n'
  const lines: string[] = [...(options.comments ?? [])]
  if (options.headerRow) lines.push(options.headerRow)
  const n = cloud.positions.length / 3
  for (let i = 0; i < n; i++) {
    const v = [cloud.positions[i * 3], cloud.positions[i * 3 + 1], cloud.positions[i * 3 + 2]].map(String)
    if (cloud.colors) for (let k = 0; k < 3; k++) v.push(String(cloud.colors[i * 3 + k]))
    if (cloud.intensities) v.push(String(cloud.intensities[i]))
    lines.push(v.join(d))
  }
  return encoder.encode(lines.join(eol) + eol)
}

/**
 * PCD 0.7 per the Point Cloud Library's "The PCD (Point Cloud Data) file format" page: header keys in
 * order, binary records little-endian, `rgb` a float whose bits hold 0x00RRGGBB.
 */
export function writePcd(cloud: TestCloud, data: 'ascii' | 'binary', options: { double?: boolean } = {}): Uint8Array {
  const n = cloud.positions.length / 3
  const fields = ['x', 'y', 'z']
  const size = options.double ? 8 : 4
  const sizes = [size, size, size]
  const types = ['F', 'F', 'F']
  if (cloud.colors) fields.push('rgb'), sizes.push(4), types.push('F')
  if (cloud.intensities) fields.push('intensity'), sizes.push(4), types.push('F')
  const header = [
    '# .PCD v0.7 - Point Cloud Data file format',
    'VERSION 0.7',
    `FIELDS ${fields.join(' ')}`,
    `SIZE ${sizes.join(' ')}`,
    `TYPE ${types.join(' ')}`,
    `COUNT ${fields.map(() => 1).join(' ')}`,
    `WIDTH ${n}`,
    'HEIGHT 1',
    'VIEWPOINT 0 0 0 1 0 0 0',
    `POINTS ${n}`,
    `DATA ${data}`,
  ]
  const head = encoder.encode(header.join('\n') + '\n')
  const packedFloat = (i: number): number => {
    const c = cloud.colors!
    const bits = ((c[i * 3] as number) << 16) | ((c[i * 3 + 1] as number) << 8) | (c[i * 3 + 2] as number)
    return new Float32Array(new Uint32Array([bits]).buffer)[0] as number
  }
  if (data === 'ascii') {
    const lines: string[] = []
    for (let i = 0; i < n; i++) {
      const v = [cloud.positions[i * 3], cloud.positions[i * 3 + 1], cloud.positions[i * 3 + 2]].map(String)
      // Enough digits that the float's bit pattern survives the round trip.
      if (cloud.colors) v.push(packedFloat(i).toPrecision(9))
      if (cloud.intensities) v.push(String(cloud.intensities[i]))
      lines.push(v.join(' '))
    }
    return concatBytes([head, encoder.encode(lines.join('\n') + '\n')])
  }
  const record = sizes.reduce((a, b) => a + b, 0)
  const body = new Uint8Array(n * record)
  const view = new DataView(body.buffer)
  for (let i = 0; i < n; i++) {
    let at = i * record
    for (let k = 0; k < 3; k++) {
      if (size === 8) view.setFloat64(at, cloud.positions[i * 3 + k] as number, true)
      else view.setFloat32(at, cloud.positions[i * 3 + k] as number, true)
      at += size
    }
    if (cloud.colors) {
      const c = cloud.colors
      view.setUint32(at, ((c[i * 3] as number) << 16) | ((c[i * 3 + 1] as number) << 8) | (c[i * 3 + 2] as number), true)
      at += 4
    }
    if (cloud.intensities) view.setFloat32(at, cloud.intensities[i] as number, true)
  }
  return concatBytes([head, body])
}
