import { closeSync, openSync, writeSync } from 'node:fs'
import type { PointBuffer } from '../../server/points/pointBuffer'
import { syntheticScan } from './roomScan'

/**
 * Synthetic scan files for the benches. The points are a seeded synthetic scan of a 12 x 9 x 3.2 m room in
 * scan order (bench/lib/roomScan.ts, generated in memory first: 31 bytes a point), so every run reads the
 * same bytes and the files look like a scanner's. Formats follow their specifications: PLY (Turk 1994),
 * LAS (ASPRS LAS 1.4 R15, Table 3 header, Tables 7 and 13 records), ASCII XYZ (three columns, metres with
 * three decimals).
 */

const BLOCK = 65536

/** Walks a synthetic room scan (bench/lib/roomScan.ts) point by point: x y z r g b intensity. */
class ScanSource {
  private readonly buffer: PointBuffer
  private i = 0
  private readonly out: [number, number, number, number, number, number, number] = [0, 0, 0, 0, 0, 0, 0]
  constructor(points: number) {
    this.buffer = syntheticScan(points)
  }
  next(): readonly [number, number, number, number, number, number, number] {
    const { positions, colors, intensities } = this.buffer
    const i = this.i++
    const o = this.out
    o[0] = positions[i * 3]!
    o[1] = positions[i * 3 + 1]!
    o[2] = positions[i * 3 + 2]!
    o[3] = colors![i * 3]!
    o[4] = colors![i * 3 + 1]!
    o[5] = colors![i * 3 + 2]!
    o[6] = intensities![i]!
    return o
  }
}

const ROOM: [number, number, number] = [12, 9, 3.2]

function writeBlocks(path: string, header: Uint8Array, total: number, recordSize: number, fill: (view: DataView, count: number, source: ScanSource) => void): number {
  const fd = openSync(path, 'w')
  try {
    writeSync(fd, header)
    const block = new Uint8Array(BLOCK * recordSize)
    const view = new DataView(block.buffer)
    const source = new ScanSource(total)
    let written = header.length
    for (let done = 0; done < total; done += BLOCK) {
      const n = Math.min(BLOCK, total - done)
      fill(view, n, source)
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
  return writeBlocks(path, header, points, 15, (view, n, source) => {
    for (let i = 0, at = 0; i < n; i++, at += 15) {
      const p = source.next()
      view.setFloat32(at, p[0], true)
      view.setFloat32(at + 4, p[1], true)
      view.setFloat32(at + 8, p[2], true)
      view.setUint8(at + 12, p[3])
      view.setUint8(at + 13, p[4])
      view.setUint8(at + 14, p[5])
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
  return writeBlocks(path, header, points, recordSize, (view, n, source) => {
    for (let i = 0, at = 0; i < n; i++, at += recordSize) {
      const p = source.next()
      view.setInt32(at, Math.round(p[0] * 1000), true)
      view.setInt32(at + 4, Math.round(p[1] * 1000), true)
      view.setInt32(at + 8, Math.round(p[2] * 1000), true)
      view.setUint16(at + 12, p[6] | 0, true)
      view.setUint8(at + 14, format === 0 ? 0x09 : 0x11) // return 1 of 1
      view.setUint8(at + 15, format === 0 ? 1 : 0)
      if (format === 6) view.setUint8(at + 16, 1)
    }
  })
}

/** ASCII XYZ: "x y z" with three decimals, one point a line. */
export function writeSyntheticXyz(path: string, points: number): number {
  const fd = openSync(path, 'w')
  const source = new ScanSource(points)
  let written = 0
  try {
    for (let done = 0; done < points; done += BLOCK) {
      const n = Math.min(BLOCK, points - done)
      let text = ''
      for (let i = 0; i < n; i++) {
        const p = source.next()
        text += `${p[0].toFixed(3)} ${p[1].toFixed(3)} ${p[2].toFixed(3)}\n`
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
