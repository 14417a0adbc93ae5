import { compress } from 'lzfjs'
import { concatBytes } from './writers'

/**
 * Writes PCD 0.7 `DATA binary_compressed` as the Point Cloud Library's PCDWriter lays it out (pcd_io.cpp,
 * writeBinaryCompressed): after the DATA line, uint32 compressed size, uint32 unpacked size (little-endian),
 * then one LZF block whose unpacked bytes hold every point's first field, then every point's second field,
 * and so on (padding fields named '_' left out).
 */

export interface PcdColumn {
  name: string
  type: 'F' | 'U' | 'I'
  size: 1 | 2 | 4 | 8
  values: number[]
}

export interface CompressedPcdOptions {
  width: number
  height: number
  columns: PcdColumn[]
  /** 'package': lzfjs's compressor; 'literal': literal runs only, valid LZF written here from liblzf's format. */
  lzf?: 'package' | 'literal'
  /** Overrides of the size prefix, to build broken files. */
  packedSize?: number
  unpackedSize?: number
  /** Replaces the LZF block. */
  block?: Uint8Array
}

function put(view: DataView, at: number, column: PcdColumn, value: number): void {
  const key = `${column.type}${column.size}`
  if (key === 'F4') view.setFloat32(at, value, true)
  else if (key === 'F8') view.setFloat64(at, value, true)
  else if (key === 'U1') view.setUint8(at, value)
  else if (key === 'U2') view.setUint16(at, value, true)
  else if (key === 'U4') view.setUint32(at, value, true)
  else if (key === 'I1') view.setInt8(at, value)
  else if (key === 'I2') view.setInt16(at, value, true)
  else if (key === 'I4') view.setInt32(at, value, true)
  else throw new Error(`no ${key} in this writer`)
}

/** liblzf's format for a literal run: a control byte (run length - 1, below 32), then the bytes. */
export function lzfLiteral(data: Uint8Array): Uint8Array {
  const out: number[] = []
  for (let at = 0; at < data.length; at += 32) {
    const run = Math.min(32, data.length - at)
    out.push(run - 1)
    for (let i = 0; i < run; i++) out.push(data[at + i] as number)
  }
  return Uint8Array.from(out)
}

export function writeCompressedPcd(options: CompressedPcdOptions): Uint8Array {
  const n = options.width * options.height
  const header = [
    '# .PCD v0.7 - Point Cloud Data file format',
    'VERSION 0.7',
    `FIELDS ${options.columns.map((c) => c.name).join(' ')}`,
    `SIZE ${options.columns.map((c) => c.size).join(' ')}`,
    `TYPE ${options.columns.map((c) => c.type).join(' ')}`,
    `COUNT ${options.columns.map(() => 1).join(' ')}`,
    `WIDTH ${options.width}`,
    `HEIGHT ${options.height}`,
    'VIEWPOINT 0 0 0 1 0 0 0',
    `POINTS ${n}`,
    'DATA binary_compressed',
  ]
  const stored = options.columns.filter((c) => c.name !== '_')
  const unpacked = new Uint8Array(stored.reduce((sum, c) => sum + c.size * n, 0))
  const view = new DataView(unpacked.buffer)
  let at = 0
  for (const column of stored) {
    for (let i = 0; i < n; i++, at += column.size) put(view, at, column, column.values[i] ?? 0)
  }
  const block = options.block ?? (options.lzf === 'literal' ? lzfLiteral(unpacked) : new Uint8Array(compress(unpacked)))
  const prefix = new DataView(new ArrayBuffer(8))
  prefix.setUint32(0, options.packedSize ?? block.length, true)
  prefix.setUint32(4, options.unpackedSize ?? unpacked.length, true)
  return concatBytes([new TextEncoder().encode(header.join('\n') + '\n'), new Uint8Array(prefix.buffer), block])
}
