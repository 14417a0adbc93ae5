import { errorInHeader } from './errors'
import type { LasHeaderInfo, Vec3 } from './types'

/**
 * The LAS public header block (ASPRS LAS Specification 1.4 R15, Table 3; 1.2 and 1.3 share the first
 * 227 bytes). Little-endian throughout. Offsets used:
 *   0 signature "LASF" | 4 file source id u16 | 6 global encoding u16 | 24 version major, minor u8
 *   26 system identifier char[32] | 58 generating software char[32] | 90 day of year u16 | 92 year u16
 *   94 header size u16 | 96 offset to point data u32 | 100 number of VLRs u32
 *   104 point data format u8 (bits 6-7 set by LAZ writers) | 105 record length u16
 *   107 legacy point count u32 | 111 legacy points by return u32[5]
 *   131 scale x y z f64 | 155 offset x y z f64 | 179 max x, min x, max y, min y, max z, min z f64
 *   1.3+: 227 start of waveform data u64 | 1.4: 235 start of first EVLR u64, 243 EVLR count u32,
 *   247 point count u64, 255 points by return u64[15]; header 375 bytes.
 */

export const LAS_MIN_HEADER = 227

/** Record core sizes and where RGB starts (ASPRS LAS 1.4, Tables 7-15); -1 without colour. */
export const LAS_POINT_FORMATS: Record<number, { core: number; color: number }> = {
  0: { core: 20, color: -1 },
  1: { core: 28, color: -1 },
  2: { core: 26, color: 20 },
  3: { core: 34, color: 28 },
  // 4, 5, 9 and 10 are 1, 3, 6 and 8 followed by 29 bytes of waveform packet fields (wave packet
  // descriptor index u8, byte offset u64, packet size u32, return point location f32, Xt Yt Zt f32),
  // which are not read: 57, 63, 59 and 67 bytes (LAS 1.4 R15, Tables 11, 12, 16, 17).
  4: { core: 57, color: -1 },
  5: { core: 63, color: 28 },
  6: { core: 30, color: -1 },
  7: { core: 36, color: 30 },
  8: { core: 38, color: 30 },
  9: { core: 59, color: -1 },
  10: { core: 67, color: 30 },
}

/** The header size field, once 96 bytes are there. */
export function lasHeaderSize(bytes: Uint8Array): number {
  return (bytes[94] as number) | ((bytes[95] as number) << 8)
}

export function parseLasHeader(bytes: Uint8Array, expectCompressed: boolean): LasHeaderInfo {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength)
  const signature = text(bytes, 0, 4)
  if (signature !== 'LASF') {
    throw errorInHeader(`'${signature}' is not 'LASF'`, { field: 'file signature' })
  }
  const versionMajor = bytes[24] as number
  const versionMinor = bytes[25] as number
  if (versionMajor !== 1 || versionMinor > 4) {
    throw errorInHeader(`${versionMajor}.${versionMinor} is not a LAS version this reader knows (1.0-1.4)`, {
      field: 'version',
    })
  }
  const headerSize = view.getUint16(94, true)
  const minimum = versionMinor >= 4 ? 375 : versionMinor === 3 ? 235 : 227
  if (headerSize < minimum) {
    throw errorInHeader(`${headerSize} bytes is shorter than LAS 1.${versionMinor}'s ${minimum}`, { field: 'header size' })
  }
  const offsetToPoints = view.getUint32(96, true)
  if (offsetToPoints < headerSize) {
    throw errorInHeader(`${offsetToPoints} is inside the ${headerSize}-byte header`, { field: 'offset to point data' })
  }
  const formatByte = bytes[104] as number
  const compressed = (formatByte & 0xc0) !== 0
  const pointFormat = formatByte & 0x3f
  if (compressed && !expectCompressed) {
    throw errorInHeader('its top bits are set, so the points are LAZ-compressed: read the file as .laz', {
      field: 'point data format',
    })
  }
  if (!compressed && expectCompressed) {
    throw errorInHeader('its top bits are clear, so the points are not LAZ-compressed: read the file as .las', {
      field: 'point data format',
    })
  }
  const layout = LAS_POINT_FORMATS[pointFormat]
  if (!layout) {
    throw errorInHeader(`point format ${pointFormat} is not read (formats 0-10 are)`, { field: 'point data format' })
  }
  if ((pointFormat === 4 || pointFormat === 5) && versionMinor < 3) {
    throw errorInHeader(`point format ${pointFormat} needs LAS 1.3 or later, the file says 1.${versionMinor}`, {
      field: 'point data format',
    })
  }
  if (pointFormat >= 6 && versionMinor < 4) {
    throw errorInHeader(`point format ${pointFormat} needs LAS 1.4, the file says 1.${versionMinor}`, {
      field: 'point data format',
    })
  }
  const recordLength = view.getUint16(105, true)
  if (recordLength < layout.core) {
    throw errorInHeader(`${recordLength} bytes is shorter than point format ${pointFormat}'s ${layout.core}`, {
      field: 'point data record length',
    })
  }
  const scale = vec(view, 131)
  const offset = vec(view, 155)
  for (let a = 0; a < 3; a++) {
    const axis = 'xyz'[a]
    const s = scale[a] as number
    if (!Number.isFinite(s) || s === 0) throw errorInHeader(`${s} is not a usable scale`, { field: `${axis} scale factor` })
    if (!Number.isFinite(offset[a])) throw errorInHeader(`${offset[a]} is not a finite number`, { field: `${axis} offset` })
  }
  const legacyPointCount = view.getUint32(107, true)
  let pointCount = legacyPointCount
  let pointsByReturn: number[] = []
  for (let i = 0; i < 5; i++) pointsByReturn.push(view.getUint32(111 + i * 4, true))
  let evlrCount = 0
  if (versionMinor >= 4) {
    evlrCount = view.getUint32(243, true)
    const count64 = Number(view.getBigUint64(247, true))
    if (count64 > 0) pointCount = count64
    pointsByReturn = []
    for (let i = 0; i < 15; i++) pointsByReturn.push(Number(view.getBigUint64(255 + i * 8, true)))
  }
  return {
    format: compressed ? 'laz' : 'las',
    versionMajor,
    versionMinor,
    version: `${versionMajor}.${versionMinor}`,
    pointFormat,
    recordLength,
    headerSize,
    offsetToPoints,
    vlrCount: view.getUint32(100, true),
    evlrCount,
    pointCount,
    legacyPointCount,
    pointsByReturn,
    scale,
    offset,
    max: [view.getFloat64(179, true), view.getFloat64(195, true), view.getFloat64(211, true)],
    min: [view.getFloat64(187, true), view.getFloat64(203, true), view.getFloat64(219, true)],
    compressed,
    globalEncoding: view.getUint16(6, true),
    fileSourceId: view.getUint16(4, true),
    systemIdentifier: text(bytes, 26, 32),
    generatingSoftware: text(bytes, 58, 32),
    creationDayOfYear: view.getUint16(90, true),
    creationYear: view.getUint16(92, true),
    hasColor: layout.color >= 0,
    hasIntensity: true,
    hasUncertainty: false,
    declaredPointCount: pointCount,
  }
}

/** Whether bytes may follow the points: 1.4 EVLRs, or 1.3+ waveform data stored in the file. */
export function lasAllowsTrailingData(header: LasHeaderInfo): boolean {
  return header.evlrCount > 0 || (header.versionMinor >= 3 && (header.globalEncoding & 0x2) !== 0)
}

function vec(view: DataView, at: number): Vec3 {
  return [view.getFloat64(at, true), view.getFloat64(at + 8, true), view.getFloat64(at + 16, true)]
}

/** A fixed-width char field, up to its first NUL, trimmed. */
function text(bytes: Uint8Array, start: number, length: number): string {
  let out = ''
  for (let i = start; i < start + length; i++) {
    const c = bytes[i] as number
    if (c === 0) break
    out += String.fromCharCode(c)
  }
  return out.trim()
}
