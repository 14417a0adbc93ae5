/**
 * A small E57 writer for tests, built from ASTM E2807's tables rather than from the reader:
 * - file header (48 bytes, little-endian): 'ASTM-E57', versionMajor u32, versionMinor u32,
 *   filePhysicalLength u64, xmlPhysicalOffset u64, xmlLogicalLength u64, pageSize u64 (1024);
 * - physical pages of 1024 bytes: 1020 data bytes + CRC-32C of them (Castagnoli, reflected polynomial
 *   0x82F63B78, init and final xor 0xFFFFFFFF, as RFC 3720 section B.4 defines it; computed here bit by bit,
 *   stored most significant byte first);
 * - compressed vector binary section: header (sectionId u8 = 1, 7 reserved, sectionLogicalLength u64,
 *   dataPhysicalOffset u64, indexPhysicalOffset u64), data packets (packetType u8 = 1, flags u8,
 *   packetLogicalLengthMinus1 u16, bytestreamCount u16, bytestreamBufferLength u16 per stream, the
 *   buffers; padded to a multiple of 4), empty packets (2, reserved, lengthMinus1) and index packets
 *   (0, flags, lengthMinus1, entryCount u16, indexLevel u8, 9 reserved, then chunkRecordNumber u64 and
 *   chunkPhysicalOffset u64 per entry);
 * - bitpack codec: Float single/double as IEEE 754 little-endian; Integer and ScaledInteger as
 *   (raw - minimum) in ceil(log2(maximum - minimum + 1)) bits, packed least significant bit first;
 * - XML: e57Root with formatName, guid, versionMajor/Minor, data3D (a Vector of scans with pose,
 *   intensityLimits, colorLimits, indexBounds and points: a CompressedVector with prototype and codecs),
 *   images2D.
 */

export type E57FieldType = 'float32' | 'float64' | 'integer' | 'scaled'

export interface E57FieldSpec {
  name: string
  type: E57FieldType
  /** Integer / ScaledInteger: raw minimum and maximum (bigint for the 64-bit range). */
  min?: bigint | number
  max?: bigint | number
  scale?: number
  offset?: number
  /** Float: declared value range (optional attributes). */
  floatMin?: number
  floatMax?: number
}

export interface E57ScanSpec {
  name?: string
  guid?: string
  /** w x y z */
  rotation?: [number, number, number, number]
  translation?: [number, number, number]
  fields: E57FieldSpec[]
  /** One array per field (same order): Float values, or raw integers (before scale and offset). */
  columns: (number | bigint)[][]
  intensityLimits?: [number, number]
  colorLimits?: { red: [number, number]; green: [number, number]; blue: [number, number] }
  indexBounds?: { rows: [number, number]; columns: [number, number] }
  /** Data packets carry at most this many bytes of each stream (forces several packets). Default 16000. */
  streamBytesPerPacket?: number
  /** Instead: each data packet carries the bytes of this many records of every stream (as writers do). */
  recordsPerPacket?: number
  /** Add an empty packet between data packets and an index packet at the end. */
  extraPackets?: boolean
  /** Write this recordCount instead of the true one. */
  recordCountOverride?: number
  /** Extra elements inside <points> (for example a foreign codec). */
  codecsXml?: string
}

export interface E57FileSpec {
  scans: E57ScanSpec[]
  images?: number
  /** Replace the XML text after it is built. */
  xmlTransform?: (xml: string) => string
}

// ---------------------------------------------------------------------------------------------------------

const CRC_TABLE = (() => {
  const table = new Uint32Array(256)
  for (let n = 0; n < 256; n++) {
    let c = n
    for (let k = 0; k < 8; k++) c = c & 1 ? (c >>> 1) ^ 0x82f63b78 : c >>> 1
    table[n] = c >>> 0
  }
  return table
})()

/** CRC-32C as RFC 3720 B.4 defines it. */
export function crc32cReference(bytes: Uint8Array): number {
  let crc = 0xffffffff
  for (const b of bytes) crc = (CRC_TABLE[(crc ^ b) & 0xff]! ^ (crc >>> 8)) >>> 0
  return (crc ^ 0xffffffff) >>> 0
}

class Bytes {
  data = new Uint8Array(1 << 16)
  length = 0
  ensure(n: number): void {
    if (this.length + n <= this.data.length) return
    const grown = new Uint8Array(Math.max(this.data.length * 2, this.length + n))
    grown.set(this.data.subarray(0, this.length))
    this.data = grown
  }
  push(bytes: Uint8Array): void {
    this.ensure(bytes.length)
    this.data.set(bytes, this.length)
    this.length += bytes.length
  }
  zeros(n: number): void {
    this.ensure(n)
    this.data.fill(0, this.length, this.length + n)
    this.length += n
  }
  view(): DataView {
    return new DataView(this.data.buffer)
  }
}

export const logicalToPhysical = (l: number) => Math.floor(l / 1020) * 1024 + (l % 1020)

function bitsOf(spec: E57FieldSpec): number {
  if (spec.type === 'float32') return 32
  if (spec.type === 'float64') return 64
  const span = BigInt(spec.max ?? 0) - BigInt(spec.min ?? 0)
  let bits = 0
  while ((1n << BigInt(bits)) <= span) bits++
  return bits
}

/** One field's values as its bitpack stream. */
export function encodeStream(spec: E57FieldSpec, values: (number | bigint)[]): Uint8Array {
  if (spec.type === 'float32' || spec.type === 'float64') {
    const size = spec.type === 'float32' ? 4 : 8
    const out = new Uint8Array(values.length * size)
    const view = new DataView(out.buffer)
    values.forEach((v, i) => (size === 4 ? view.setFloat32(i * 4, Number(v), true) : view.setFloat64(i * 8, Number(v), true)))
    return out
  }
  const bits = bitsOf(spec)
  const out = new Uint8Array(Math.ceil((values.length * bits) / 8))
  let bit = 0
  if (bits <= 24 && typeof spec.min !== 'bigint') {
    // The same packing in plain numbers (large files for the bench): value bits OR-ed in byte by byte.
    const min = spec.min ?? 0
    for (const v of values) {
      let raw = Number(v) - min
      if (raw < 0 || raw >= 2 ** Math.max(bits, 1)) throw new Error(`value ${v} outside ${spec.name}'s range`)
      let left = bits
      while (left > 0) {
        const room = 8 - (bit & 7)
        const take = Math.min(room, left)
        out[bit >> 3]! |= (raw & ((1 << take) - 1)) << (bit & 7)
        raw >>>= take
        bit += take
        left -= take
      }
    }
    return out
  }
  const min = BigInt(spec.min ?? 0)
  for (const v of values) {
    const raw = BigInt(v) - min
    if (raw < 0n || raw >= 1n << BigInt(Math.max(bits, 1))) throw new Error(`value ${v} outside ${spec.name}'s range`)
    for (let k = 0; k < bits; k++, bit++) if ((raw >> BigInt(k)) & 1n) out[bit >> 3]! |= 1 << (bit & 7)
  }
  return out
}

function u64(view: DataView, at: number, v: number): void {
  view.setBigUint64(at, BigInt(v), true)
}

function fieldXml(spec: E57FieldSpec): string {
  switch (spec.type) {
    case 'float32':
    case 'float64': {
      const range = spec.floatMin !== undefined ? ` minimum="${spec.floatMin}" maximum="${spec.floatMax}"` : ''
      return `<${spec.name} type="Float" precision="${spec.type === 'float32' ? 'single' : 'double'}"${range}/>`
    }
    case 'integer':
      return `<${spec.name} type="Integer" minimum="${spec.min ?? 0}" maximum="${spec.max ?? 0}"/>`
    case 'scaled':
      return `<${spec.name} type="ScaledInteger" minimum="${spec.min ?? 0}" maximum="${spec.max ?? 0}" scale="${spec.scale ?? 1}" offset="${spec.offset ?? 0}"/>`
  }
}

const float = (name: string, v: number) => `<${name} type="Float">${v}</${name}>`
const integer = (name: string, v: number) => `<${name} type="Integer">${v}</${name}>`

export interface WrittenE57 {
  bytes: Uint8Array
  /** Physical offset of each scan's binary section. */
  sectionOffsets: number[]
  xmlPhysicalOffset: number
  xml: string
}

/** Writes an E57 file in memory. */
export function writeE57(spec: E57FileSpec): WrittenE57 {
  const file = new Bytes()
  file.zeros(48)
  const sections: { offset: number; count: number }[] = []
  for (const scan of spec.scans) {
    // Sections start on a 4-byte boundary.
    file.zeros((4 - (file.length % 4)) % 4)
    const start = file.length
    file.zeros(32)
    const streams = scan.fields.map((f, i) => encodeStream(f, scan.columns[i] ?? []))
    const per = scan.streamBytesPerPacket ?? 16000
    const taken = streams.map(() => 0)
    let packets = 0
    const index: { record: number; offset: number }[] = []
    while (taken.some((t, i) => t < streams[i]!.length) || packets === 0) {
      if (scan.extraPackets && packets === 1) {
        // An empty packet of 8 bytes.
        const empty = new Uint8Array(8)
        empty[0] = 2
        new DataView(empty.buffer).setUint16(2, 7, true)
        file.push(empty)
      }
      const upTo = (i: number) => scan.recordsPerPacket
        ? Math.min(streams[i]!.length, Math.ceil(((packets + 1) * scan.recordsPerPacket * bitsOf(scan.fields[i]!)) / 8))
        : Math.min(streams[i]!.length, taken[i]! + per)
      const parts = streams.map((s, i) => s.subarray(taken[i], upTo(i)))
      const headerBytes = 6 + 2 * streams.length
      let length = headerBytes + parts.reduce((n, p) => n + p.length, 0)
      length += (4 - (length % 4)) % 4
      if (length > 65536) throw new Error('packet too long; lower streamBytesPerPacket')
      const packet = new Uint8Array(length)
      const view = new DataView(packet.buffer)
      packet[0] = 1
      view.setUint16(2, length - 1, true)
      view.setUint16(4, streams.length, true)
      let at = headerBytes
      parts.forEach((p, i) => {
        view.setUint16(6 + 2 * i, p.length, true)
        packet.set(p, at)
        at += p.length
        taken[i] = taken[i]! + p.length
      })
      index.push({ record: 0, offset: logicalToPhysical(file.length) })
      file.push(packet)
      packets++
    }
    const dataOffset = logicalToPhysical(start + 32)
    let indexOffset = 0
    if (scan.extraPackets) {
      const length = 16 + 16 * index.length
      const packet = new Uint8Array(length)
      const view = new DataView(packet.buffer)
      packet[0] = 0
      view.setUint16(2, length - 1, true)
      view.setUint16(4, index.length, true)
      index.forEach((e, i) => {
        u64(view, 16 + 16 * i, e.record)
        u64(view, 24 + 16 * i, e.offset)
      })
      indexOffset = logicalToPhysical(file.length)
      file.push(packet)
    }
    const view = file.view()
    file.data[start] = 1
    u64(view, start + 8, file.length - start)
    u64(view, start + 16, dataOffset)
    u64(view, start + 24, indexOffset)
    sections.push({ offset: logicalToPhysical(start), count: scan.columns[0]?.length ?? 0 })
  }

  const scansXml = spec.scans.map((scan, i) => {
    const parts: string[] = []
    parts.push(`<guid type="String"><![CDATA[${scan.guid ?? `scan-${i}-guid`}]]></guid>`)
    if (scan.name) parts.push(`<name type="String"><![CDATA[${scan.name}]]></name>`)
    if (scan.rotation || scan.translation) {
      const [w, x, y, z] = scan.rotation ?? [1, 0, 0, 0]
      const [tx, ty, tz] = scan.translation ?? [0, 0, 0]
      parts.push(
        `<pose type="Structure"><rotation type="Structure">${float('w', w)}${float('x', x)}${float('y', y)}${float('z', z)}</rotation>` +
          `<translation type="Structure">${float('x', tx)}${float('y', ty)}${float('z', tz)}</translation></pose>`,
      )
    }
    if (scan.intensityLimits) parts.push(`<intensityLimits type="Structure">${float('intensityMinimum', scan.intensityLimits[0])}${float('intensityMaximum', scan.intensityLimits[1])}</intensityLimits>`)
    if (scan.colorLimits) {
      const c = scan.colorLimits
      parts.push(
        `<colorLimits type="Structure">${integer('colorRedMinimum', c.red[0])}${integer('colorRedMaximum', c.red[1])}${integer('colorGreenMinimum', c.green[0])}` +
          `${integer('colorGreenMaximum', c.green[1])}${integer('colorBlueMinimum', c.blue[0])}${integer('colorBlueMaximum', c.blue[1])}</colorLimits>`,
      )
    }
    if (scan.indexBounds) {
      const b = scan.indexBounds
      parts.push(`<indexBounds type="Structure">${integer('rowMinimum', b.rows[0])}${integer('rowMaximum', b.rows[1])}${integer('columnMinimum', b.columns[0])}${integer('columnMaximum', b.columns[1])}<returnMinimum type="Integer"/><returnMaximum type="Integer"/></indexBounds>`)
    }
    const count = scan.recordCountOverride ?? sections[i]!.count
    parts.push(
      `<points type="CompressedVector" fileOffset="${sections[i]!.offset}" recordCount="${count}">` +
        `<prototype type="Structure">${scan.fields.map(fieldXml).join('')}</prototype>` +
        `<codecs type="Vector" allowHeterogeneousChildren="1">${scan.codecsXml ?? ''}</codecs></points>`,
    )
    return `<vectorChild type="Structure">${parts.join('\n')}</vectorChild>`
  })
  const images = Array.from({ length: spec.images ?? 0 }, (_, i) => `<vectorChild type="Structure"><guid type="String"><![CDATA[image-${i}]]></guid></vectorChild>`).join('')
  let xml =
    `<?xml version="1.0" encoding="UTF-8"?>\n<e57Root type="Structure" xmlns="http://www.astm.org/COMMIT/E57/2010-e57-v1.0">\n` +
    `<formatName type="String"><![CDATA[ASTM E57 3D Imaging Data File]]></formatName>\n<guid type="String"><![CDATA[test-file-guid]]></guid>\n` +
    `<versionMajor type="Integer">1</versionMajor>\n<versionMinor type="Integer">0</versionMinor>\n` +
    `<data3D type="Vector" allowHeterogeneousChildren="1">\n${scansXml.join('\n')}\n</data3D>\n` +
    `<images2D type="Vector" allowHeterogeneousChildren="1">${images}</images2D>\n</e57Root>\n`
  if (spec.xmlTransform) xml = spec.xmlTransform(xml)
  const xmlBytes = new TextEncoder().encode(xml)
  const xmlLogical = file.length
  file.push(xmlBytes)

  // Pages: 1020 data bytes and the CRC-32C of them, most significant byte first.
  const pages = Math.ceil(file.length / 1020)
  const out = new Uint8Array(pages * 1024)
  const header = new DataView(file.data.buffer)
  new TextEncoder().encodeInto('ASTM-E57', file.data)
  header.setUint32(8, 1, true)
  header.setUint32(12, 0, true)
  u64(header, 16, out.length)
  u64(header, 24, logicalToPhysical(xmlLogical))
  u64(header, 32, xmlBytes.length)
  u64(header, 40, 1024)
  for (let p = 0; p < pages; p++) {
    const data = new Uint8Array(1020)
    data.set(file.data.subarray(p * 1020, Math.min(file.length, (p + 1) * 1020)))
    out.set(data, p * 1024)
    new DataView(out.buffer).setUint32(p * 1024 + 1020, crc32cReference(data), false)
  }
  return { bytes: out, sectionOffsets: sections.map((s) => s.offset), xmlPhysicalOffset: logicalToPhysical(xmlLogical), xml }
}
