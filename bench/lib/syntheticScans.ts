import { closeSync, openSync, writeSync } from 'node:fs'

/**
 * Synthetic scan files for the parse bench, written in blocks so that 10 M points never sit in memory.
 * The points are a deterministic pseudo-random cloud in a 20 x 15 x 4 m room (xorshift32, fixed seed), so
 * every run reads the same bytes. Formats follow their specifications: PLY (Turk 1994), LAS (ASPRS LAS
 * 1.4 R15, Table 3 header, Tables 7 and 13 records), ASCII XYZ (three columns, millimetres as decimals).
 */

const BLOCK = 65536

class Xorshift {
  private state: number
  constructor(seed = 0x2545f491) {
    this.state = seed >>> 0 || 1
  }
  /** Uniform in [0, 1). */
  next(): number {
    let x = this.state
    x ^= x << 13
    x ^= x >>> 17
    x ^= x << 5
    this.state = x >>> 0
    return this.state / 4294967296
  }
}

const ROOM: [number, number, number] = [20, 15, 4]

function writeBlocks(path: string, header: Uint8Array, total: number, recordSize: number, fill: (view: DataView, count: number, rng: Xorshift) => void): number {
  const fd = openSync(path, 'w')
  try {
    writeSync(fd, header)
    const block = new Uint8Array(BLOCK * recordSize)
    const view = new DataView(block.buffer)
    const rng = new Xorshift()
    let written = header.length
    for (let done = 0; done < total; done += BLOCK) {
      const n = Math.min(BLOCK, total - done)
      fill(view, n, rng)
      writeSync(fd, block, 0, n * recordSize)
      written += n * recordSize
    }
    return written
  } finally {
    closeSync(fd)
  }
}

/** Binary little-endian PLY: float x y z, uchar red green blue (15 bytes a point). */
export function writeSyntheticPly(path: string, points: number): number {
  const header = new TextEncoder().encode(
    [
      'ply',
      'format binary_little_endian 1.0',
      'comment synthetic bench cloud',
      `element vertex ${points}`,
      'property float x',
      'property float y',
      'property float z',
      'property uchar red',
      'property uchar green',
      'property uchar blue',
      'end_header',
      '',
    ].join('\n'),
  )
  return writeBlocks(path, header, points, 15, (view, n, rng) => {
    for (let i = 0, at = 0; i < n; i++, at += 15) {
      view.setFloat32(at, rng.next() * ROOM[0], true)
      view.setFloat32(at + 4, rng.next() * ROOM[1], true)
      view.setFloat32(at + 8, rng.next() * ROOM[2], true)
      view.setUint8(at + 12, (rng.next() * 256) | 0)
      view.setUint8(at + 13, (rng.next() * 256) | 0)
      view.setUint8(at + 14, (rng.next() * 256) | 0)
    }
  })
}

/** LAS 1.2 point format 0 (20 bytes) or LAS 1.4 point format 6 (30 bytes), scale 0.001, offset 0. */
export function writeSyntheticLas(path: string, points: number, version: '1.2' | '1.4'): number {
  const minor = version === '1.4' ? 4 : 2
  const format = minor === 4 ? 6 : 0
  const headerSize = minor === 4 ? 375 : 227
  const recordSize = format === 6 ? 30 : 20
  const header = new Uint8Array(headerSize)
  const h = new DataView(header.buffer)
  header.set(new TextEncoder().encode('LASF'), 0)
  h.setUint16(6, minor === 4 ? 0x10 : 0, true) // global encoding: WKT bit for 1.4
  h.setUint8(24, 1)
  h.setUint8(25, minor)
  header.set(new TextEncoder().encode('synthetic bench'), 26)
  h.setUint16(94, headerSize, true)
  h.setUint32(96, headerSize, true) // offset to point data, no VLRs
  h.setUint8(104, format)
  h.setUint16(105, recordSize, true)
  h.setUint32(107, format === 0 ? points : 0, true)
  h.setUint32(111, format === 0 ? points : 0, true)
  for (let a = 0; a < 3; a++) {
    h.setFloat64(131 + a * 8, 0.001, true)
    h.setFloat64(155 + a * 8, 0, true)
    h.setFloat64(179 + a * 16, ROOM[a] as number, true)
    h.setFloat64(187 + a * 16, 0, true)
  }
  if (minor === 4) {
    h.setBigUint64(247, BigInt(points), true)
    h.setBigUint64(255, BigInt(points), true)
  }
  return writeBlocks(path, header, points, recordSize, (view, n, rng) => {
    for (let i = 0, at = 0; i < n; i++, at += recordSize) {
      view.setInt32(at, Math.floor(rng.next() * ROOM[0] * 1000), true)
      view.setInt32(at + 4, Math.floor(rng.next() * ROOM[1] * 1000), true)
      view.setInt32(at + 8, Math.floor(rng.next() * ROOM[2] * 1000), true)
      view.setUint16(at + 12, (rng.next() * 65536) | 0, true)
      view.setUint8(at + 14, format === 0 ? 0x09 : 0x11) // return 1 of 1
      view.setUint8(at + 15, format === 0 ? 1 : 0)
      if (format === 6) view.setUint8(at + 16, 1)
    }
  })
}

/** ASCII XYZ: "x y z" with three decimals, one point a line. */
export function writeSyntheticXyz(path: string, points: number): number {
  const fd = openSync(path, 'w')
  const rng = new Xorshift()
  let written = 0
  try {
    for (let done = 0; done < points; done += BLOCK) {
      const n = Math.min(BLOCK, points - done)
      let text = ''
      for (let i = 0; i < n; i++) {
        text += `${(rng.next() * ROOM[0]).toFixed(3)} ${(rng.next() * ROOM[1]).toFixed(3)} ${(rng.next() * ROOM[2]).toFixed(3)}\n`
      }
      const bytes = Buffer.from(text, 'latin1')
      writeSync(fd, bytes)
      written += bytes.length
    }
    return written
  } finally {
    closeSync(fd)
  }
}
