/**
 * Builds LAS files byte by byte from the ASPRS LAS Specification 1.4 R15 (2019) tables, independently
 * of the reader: Table 3 (public header block; 1.2 uses its first 227 bytes, 1.4 all 375), Table 4
 * (variable length record header, 54 bytes), Tables 7-10 (point formats 0-3), 11-12 (4-5), 13-15 (6-8) and
 * 16-17 (9-10: 6 and 8 with the 29 bytes of wave packet fields).
 * Little-endian throughout.
 */

export interface LasTestPoint {
  /** Scaled integers as stored: X = round((x - offset) / scale). */
  X: number
  Y: number
  Z: number
  intensity: number
  returnNumber: number
  numberOfReturns: number
  classification: number
  gpsTime?: number
  /** 16-bit colour, formats 2, 3, 7, 8. */
  rgb?: [number, number, number]
  nir?: number
}

export interface LasBuildOptions {
  minor: 2 | 3 | 4
  pointFormat: 0 | 1 | 2 | 3 | 4 | 5 | 6 | 7 | 8 | 9 | 10
  scale: [number, number, number]
  offset: [number, number, number]
  points: LasTestPoint[]
  vlrs?: { userId: string; recordId: number; payload: Uint8Array }[]
  /** Extra bytes after each record's core (the record length grows by this). */
  extraBytes?: number
  systemIdentifier?: string
  generatingSoftware?: string
  dayOfYear?: number
  year?: number
  /** Overrides the declared point count (to build files that disagree with their body). */
  declaredCount?: number
}

/** Table 7-15 core record sizes. */
export const CORE_SIZE: Record<number, number> = { 0: 20, 1: 28, 2: 26, 3: 34, 4: 57, 5: 63, 6: 30, 7: 36, 8: 38, 9: 59, 10: 67 }

/** The format whose fields a waveform format starts with (Tables 11, 12, 16, 17). */
const WAVE_BASE: Record<number, number> = { 4: 1, 5: 3, 9: 6, 10: 8 }

function putText(view: DataView, at: number, text: string, length: number): void {
  for (let i = 0; i < length; i++) view.setUint8(at + i, i < text.length ? text.charCodeAt(i) : 0)
}

export function buildLas(options: LasBuildOptions): Uint8Array {
  const { minor, pointFormat, scale, offset, points } = options
  const headerSize = minor === 4 ? 375 : minor === 3 ? 235 : 227
  const vlrs = options.vlrs ?? []
  const vlrBytes = vlrs.reduce((n, v) => n + 54 + v.payload.length, 0)
  const recordLength = (CORE_SIZE[pointFormat] as number) + (options.extraBytes ?? 0)
  const offsetToPoints = headerSize + vlrBytes
  const total = offsetToPoints + points.length * recordLength
  const bytes = new Uint8Array(total)
  const view = new DataView(bytes.buffer)
  const count = options.declaredCount ?? points.length

  // Table 3, public header block.
  putText(view, 0, 'LASF', 4) // File Signature char[4]
  view.setUint16(4, 0, true) // File Source ID
  view.setUint16(6, minor === 4 ? 0x10 : 0, true) // Global Encoding (bit 4: WKT CRS, required for 6-10)
  // 8..23: Project ID GUID, left zero
  view.setUint8(24, 1) // Version Major
  view.setUint8(25, minor) // Version Minor
  putText(view, 26, options.systemIdentifier ?? 'TEST BUILDER', 32) // System Identifier
  putText(view, 58, options.generatingSoftware ?? 'spec-table builder', 32) // Generating Software
  view.setUint16(90, options.dayOfYear ?? 123, true) // File Creation Day of Year
  view.setUint16(92, options.year ?? 2024, true) // File Creation Year
  view.setUint16(94, headerSize, true) // Header Size
  view.setUint32(96, offsetToPoints, true) // Offset to Point Data
  view.setUint32(100, vlrs.length, true) // Number of Variable Length Records
  view.setUint8(104, pointFormat) // Point Data Record Format
  view.setUint16(105, recordLength, true) // Point Data Record Length
  const legacy = pointFormat < 6 && count <= 0xffffffff
  view.setUint32(107, legacy ? count : 0, true) // Legacy Number of Point Records
  const byReturn = new Array<number>(15).fill(0)
  for (const p of points) byReturn[p.returnNumber - 1] = (byReturn[p.returnNumber - 1] ?? 0) + 1
  for (let i = 0; i < 5; i++) view.setUint32(111 + i * 4, legacy ? (byReturn[i] as number) : 0, true) // Legacy by return
  for (let a = 0; a < 3; a++) view.setFloat64(131 + a * 8, scale[a] as number, true) // X Y Z Scale Factor
  for (let a = 0; a < 3; a++) view.setFloat64(155 + a * 8, offset[a] as number, true) // X Y Z Offset
  const keys = ['X', 'Y', 'Z'] as const
  for (let a = 0; a < 3; a++) {
    const key = keys[a] as (typeof keys)[number]
    const values = points.map((p) => p[key] * (scale[a] as number) + (offset[a] as number))
    view.setFloat64(179 + a * 16, Math.max(...values), true) // Max X / Max Y / Max Z
    view.setFloat64(187 + a * 16, Math.min(...values), true) // Min X / Min Y / Min Z
  }
  if (minor >= 3) view.setBigUint64(227, 0n, true) // Start of Waveform Data Packet Record
  if (minor === 4) {
    view.setBigUint64(235, 0n, true) // Start of First Extended Variable Length Record
    view.setUint32(243, 0, true) // Number of Extended Variable Length Records
    view.setBigUint64(247, BigInt(count), true) // Number of Point Records
    for (let i = 0; i < 15; i++) view.setBigUint64(255 + i * 8, BigInt(byReturn[i] as number), true) // by return
  }

  // Table 4, variable length records.
  let at = headerSize
  for (const vlr of vlrs) {
    view.setUint16(at, 0, true) // Reserved
    putText(view, at + 2, vlr.userId, 16) // User ID
    view.setUint16(at + 18, vlr.recordId, true) // Record ID
    view.setUint16(at + 20, vlr.payload.length, true) // Record Length After Header
    putText(view, at + 22, 'test record', 32) // Description
    bytes.set(vlr.payload, at + 54)
    at += 54 + vlr.payload.length
  }

  // Point records.
  const wave = WAVE_BASE[pointFormat] !== undefined
  const base = WAVE_BASE[pointFormat] ?? pointFormat
  for (const p of points) {
    view.setInt32(at, p.X, true)
    view.setInt32(at + 4, p.Y, true)
    view.setInt32(at + 8, p.Z, true)
    view.setUint16(at + 12, p.intensity, true)
    if (base < 6) {
      // Table 7: return number bits 0-2, number of returns bits 3-5, then classification, scan angle
      // rank (char), user data, point source id; format 1 adds GPS time at 20; 2 adds RGB at 20; 3 both.
      view.setUint8(at + 14, (p.returnNumber & 7) | ((p.numberOfReturns & 7) << 3))
      view.setUint8(at + 15, p.classification)
      view.setInt8(at + 16, -5)
      view.setUint8(at + 17, 0)
      view.setUint16(at + 18, 7, true)
      if (base === 1 || base === 3) view.setFloat64(at + 20, p.gpsTime ?? 0, true)
      const colorAt = base === 2 ? 20 : base === 3 ? 28 : -1
      if (colorAt >= 0) for (let k = 0; k < 3; k++) view.setUint16(at + colorAt + k * 2, p.rgb?.[k] ?? 0, true)
    } else {
      // Table 13: return number bits 0-3, number of returns bits 4-7; classification flags, channel,
      // scan direction, edge; classification; user data; scan angle (short); point source id; GPS time.
      view.setUint8(at + 14, (p.returnNumber & 15) | ((p.numberOfReturns & 15) << 4))
      view.setUint8(at + 15, 0)
      view.setUint8(at + 16, p.classification)
      view.setUint8(at + 17, 0)
      view.setInt16(at + 18, -1000, true)
      view.setUint16(at + 20, 7, true)
      view.setFloat64(at + 22, p.gpsTime ?? 0, true)
      if (base >= 7) for (let k = 0; k < 3; k++) view.setUint16(at + 30 + k * 2, p.rgb?.[k] ?? 0, true)
      if (base === 8) view.setUint16(at + 36, p.nir ?? 0, true)
    }
    if (wave) {
      // Table 11 / 16 wave packet fields after the base record: descriptor index u8, byte offset to waveform
      // data u64, waveform packet size u32, return point waveform location f32, X(t) Y(t) Z(t) f32.
      const w = at + (CORE_SIZE[base] as number)
      view.setUint8(w, 1)
      view.setBigUint64(w + 1, 123456789n, true)
      view.setUint32(w + 9, 256, true)
      view.setFloat32(w + 13, 1500.25, true)
      view.setFloat32(w + 17, 0.25, true)
      view.setFloat32(w + 21, -0.5, true)
      view.setFloat32(w + 25, 0.75, true)
    }
    // Extra bytes stay as a pattern a careless reader would notice.
    for (let e = CORE_SIZE[pointFormat] as number; e < recordLength; e++) view.setUint8(at + e, 0xa5)
    at += recordLength
  }
  return bytes
}

/** A few points on a grid with varied fields, for the builder. */
export function samplePoints(n: number, withColor: boolean): LasTestPoint[] {
  const points: LasTestPoint[] = []
  for (let i = 0; i < n; i++) {
    points.push({
      X: 1000 * i - 12345,
      Y: -700 * i + 98765,
      Z: (i * 37) % 1000 - 500,
      intensity: (i * 997) % 65536,
      returnNumber: 1 + (i % 3),
      numberOfReturns: 3,
      classification: 2 + (i % 4),
      gpsTime: 1000.5 + i,
      rgb: withColor ? [(i * 4099) % 65536, (i * 257) % 65536, 65535 - ((i * 1031) % 65536)] : undefined,
      nir: 4242,
    })
  }
  return points
}
