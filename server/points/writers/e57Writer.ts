import { randomUUID } from 'node:crypto'
import { crc32c } from '@aws-crypto/crc32c'
import { Matrix4, Quaternion } from 'three'
import { ExportError, type ByteSink, type ExportBatch } from './sink'

/**
 * Streaming E57 writer (ASTM E2807). Each placement becomes one scan in `/data3D` with its points in the
 * scan's own frame and the placement's transform kept as the scan's pose (rotation quaternion w x y z and
 * translation: file frame = R x scan frame + t), so nothing is resampled.
 *
 * File (E2807 section 8): a 48-byte header (`ASTM-E57`, version 1.0 as u32 major and minor, then u64
 * filePhysicalLength, xmlPhysicalOffset, xmlLogicalLength, pageSize 1024), then the whole file as physical
 * pages of 1020 data bytes followed by the CRC-32C (Castagnoli) of those bytes, most significant byte first.
 * Offsets written into the XML and section headers are physical; lengths are logical.
 *
 * Per scan a compressed vector binary section: a 32-byte header (sectionId 1, 7 reserved bytes,
 * sectionLogicalLength u64, dataPhysicalOffset u64, indexPhysicalOffset u64 = 0: no index packet), then
 * data packets (packetType 1, flags 0, packetLogicalLengthMinus1 u16, bytestreamCount u16, one u16 buffer
 * length per stream, the buffers one after the other, padded to a multiple of 4; at most 64 KiB each).
 * Streams follow the prototype: cartesianX/Y/Z Float double, then intensity Float single, then colorRed,
 * colorGreen, colorBlue Integer 0-255 (bitpack codec, the default: floats as IEEE 754 little-endian,
 * 8-bit integers as their bytes). Sections start on 4-byte boundaries; the XML section follows the last one.
 *
 * The header is written first, yet holds the file's length and the XML's place: every packet holds
 * `E57_RECORDS_PER_PACKET` records except each scan's last, so the whole layout follows from the counts,
 * which the caller measures first (a pass over the points). Memory: one packet per field and one page.
 */

export const E57_PAGE = 1024
const PAGE_DATA = 1020
export const E57_RECORDS_PER_PACKET = 2048

export interface E57ScanPlan {
  name: string
  count: number
  /** Column-major 4x4 rigid transform from the scan's frame to the file's (the placement's matrix). */
  pose: readonly number[]
  /** Bounds of the points in the scan's own frame. */
  min: [number, number, number]
  max: [number, number, number]
  /** Smallest and largest intensity (when the file carries intensity). */
  intensityMin?: number
  intensityMax?: number
}

export interface E57Plan {
  scans: E57ScanPlan[]
  colors: boolean
  intensities: boolean
  guid?: string
  created?: Date
}

export const physicalOffset = (logical: number) => Math.floor(logical / PAGE_DATA) * E57_PAGE + (logical % PAGE_DATA)

interface Layout {
  sectionStarts: number[]
  xml: Uint8Array
  xmlLogical: number
  physicalLength: number
}

function streamCount(plan: E57Plan): number {
  return 3 + (plan.intensities ? 1 : 0) + (plan.colors ? 3 : 0)
}

function recordBytes(plan: E57Plan): number {
  return 24 + (plan.intensities ? 4 : 0) + (plan.colors ? 3 : 0)
}

function packetLength(plan: E57Plan, records: number): number {
  const length = 6 + 2 * streamCount(plan) + records * recordBytes(plan)
  return length + ((4 - (length % 4)) % 4)
}

function sectionLength(plan: E57Plan, count: number): number {
  const full = Math.floor(count / E57_RECORDS_PER_PACKET)
  const rest = count % E57_RECORDS_PER_PACKET
  // A scan without points still gets one (empty) data packet.
  return 32 + full * packetLength(plan, E57_RECORDS_PER_PACKET) + (rest > 0 || full === 0 ? packetLength(plan, rest) : 0)
}

const cdata = (text: string) => `<![CDATA[${text.replace(/]]>/g, ']]]]><![CDATA[>')}]]>`
const num = (v: number) => {
  if (!Number.isFinite(v)) throw new ExportError(`E57 export: a value to write is not a finite number (${v})`)
  return String(v)
}
const float = (name: string, v: number) => `<${name} type="Float">${num(v)}</${name}>`
const integer = (name: string, v: number) => `<${name} type="Integer">${v}</${name}>`

/** The pose's quaternion (w x y z, unit, w >= 0) and translation from a column-major rigid matrix. */
export function poseOf(matrix: readonly number[]): { rotation: [number, number, number, number]; translation: [number, number, number] } {
  const q = new Quaternion().setFromRotationMatrix(new Matrix4().fromArray(matrix as number[]))
  q.normalize()
  const sign = q.w < 0 ? -1 : 1
  return { rotation: [sign * q.w, sign * q.x, sign * q.y, sign * q.z], translation: [matrix[12]!, matrix[13]!, matrix[14]!] }
}

function scanXml(plan: E57Plan, scan: E57ScanPlan, fileOffset: number, guid: string): string {
  const { rotation: [w, x, y, z], translation: [tx, ty, tz] } = poseOf(scan.pose)
  const parts = [
    `<guid type="String">${cdata(guid)}</guid>`,
    `<name type="String">${cdata(scan.name)}</name>`,
    `<pose type="Structure"><rotation type="Structure">${float('w', w)}${float('x', x)}${float('y', y)}${float('z', z)}</rotation>` +
      `<translation type="Structure">${float('x', tx)}${float('y', ty)}${float('z', tz)}</translation></pose>`,
  ]
  if (scan.count > 0) {
    parts.push(
      `<cartesianBounds type="Structure">${float('xMinimum', scan.min[0])}${float('xMaximum', scan.max[0])}${float('yMinimum', scan.min[1])}` +
        `${float('yMaximum', scan.max[1])}${float('zMinimum', scan.min[2])}${float('zMaximum', scan.max[2])}</cartesianBounds>`,
    )
  }
  const [iMin, iMax] = intensityLimits(scan)
  if (plan.intensities) parts.push(`<intensityLimits type="Structure">${float('intensityMinimum', iMin)}${float('intensityMaximum', iMax)}</intensityLimits>`)
  if (plan.colors) {
    parts.push(
      `<colorLimits type="Structure">${integer('colorRedMinimum', 0)}${integer('colorRedMaximum', 255)}${integer('colorGreenMinimum', 0)}` +
        `${integer('colorGreenMaximum', 255)}${integer('colorBlueMinimum', 0)}${integer('colorBlueMaximum', 255)}</colorLimits>`,
    )
  }
  const prototype = [
    '<cartesianX type="Float" precision="double"/>',
    '<cartesianY type="Float" precision="double"/>',
    '<cartesianZ type="Float" precision="double"/>',
    ...(plan.intensities ? [`<intensity type="Float" precision="single" minimum="${num(Math.fround(iMin))}" maximum="${num(Math.fround(iMax))}"/>`] : []),
    ...(plan.colors ? ['colorRed', 'colorGreen', 'colorBlue'].map((c) => `<${c} type="Integer" minimum="0" maximum="255"/>`) : []),
  ]
  parts.push(
    `<points type="CompressedVector" fileOffset="${fileOffset}" recordCount="${scan.count}">` +
      `<prototype type="Structure">${prototype.join('')}</prototype><codecs type="Vector" allowHeterogeneousChildren="1"/></points>`,
  )
  return `<vectorChild type="Structure">\n${parts.join('\n')}\n</vectorChild>`
}

/** Intensity limits as written: the scan's range, widened to a span of 1 where every value is the same. */
function intensityLimits(scan: E57ScanPlan): [number, number] {
  const lo = scan.intensityMin ?? 0
  const hi = scan.intensityMax ?? 0
  return hi > lo ? [lo, hi] : [lo, lo + 1]
}

function layout(plan: E57Plan, guid: string): Layout {
  let logical = 48
  const sectionStarts: number[] = []
  for (const scan of plan.scans) {
    logical += (4 - (logical % 4)) % 4
    sectionStarts.push(logical)
    logical += sectionLength(plan, scan.count)
  }
  const created = plan.created ?? new Date()
  const xml =
    `<?xml version="1.0" encoding="UTF-8"?>\n<e57Root type="Structure" xmlns="http://www.astm.org/COMMIT/E57/2010-e57-v1.0">\n` +
    `<formatName type="String">${cdata('ASTM E57 3D Imaging Data File')}</formatName>\n<guid type="String">${cdata(guid)}</guid>\n` +
    `<versionMajor type="Integer">1</versionMajor>\n<versionMinor type="Integer">0</versionMinor>\n` +
    `<e57LibraryVersion type="String">${cdata('Spanmark export')}</e57LibraryVersion>\n` +
    // E2807 dates are GPS time in seconds; 315964800 s separate the GPS epoch (1980-01-06) from the Unix one
    // (leap seconds left out: the date is informative).
    `<creationDateTime type="Structure">${float('dateTimeValue', created.getTime() / 1000 - 315_964_800)}${integer('isAtomicClockReferenced', 0)}</creationDateTime>\n` +
    `<coordinateMetadata type="String"/>\n` +
    `<data3D type="Vector" allowHeterogeneousChildren="1">\n` +
    plan.scans.map((s, i) => scanXml(plan, s, physicalOffset(sectionStarts[i]!), `${guid}-scan-${i}`)).join('\n') +
    `\n</data3D>\n<images2D type="Vector" allowHeterogeneousChildren="1"/>\n</e57Root>\n`
  const bytes = new TextEncoder().encode(xml)
  const pages = Math.ceil((logical + bytes.length) / PAGE_DATA)
  return { sectionStarts, xml: bytes, xmlLogical: logical, physicalLength: pages * E57_PAGE }
}

/** Logical bytes in, CRC-checked physical pages out (buffered into chunks of 1 MiB). */
class PageWriter {
  private readonly page = new Uint8Array(PAGE_DATA)
  private used = 0
  private chunk: Uint8Array = Buffer.allocUnsafe(E57_PAGE * 1024)
  private chunkUsed = 0
  logical = 0

  constructor(private readonly sink: ByteSink) {}

  async write(bytes: Uint8Array): Promise<void> {
    let at = 0
    while (at < bytes.length) {
      const take = Math.min(bytes.length - at, PAGE_DATA - this.used)
      this.page.set(bytes.subarray(at, at + take), this.used)
      this.used += take
      at += take
      this.logical += take
      if (this.used === PAGE_DATA) await this.emitPage()
    }
  }

  async zeros(n: number): Promise<void> {
    if (n > 0) await this.write(new Uint8Array(n))
  }

  private async emitPage(): Promise<void> {
    this.chunk.set(this.page, this.chunkUsed)
    new DataView(this.chunk.buffer, this.chunk.byteOffset).setUint32(this.chunkUsed + PAGE_DATA, crc32c(this.page) >>> 0, false)
    this.chunkUsed += E57_PAGE
    this.page.fill(0)
    this.used = 0
    if (this.chunkUsed === this.chunk.length) await this.flush()
  }

  private async flush(): Promise<void> {
    if (this.chunkUsed === 0) return
    // Hand the chunk over and take a fresh one: no copy, and every byte is written before it is passed on.
    const out = this.chunk.subarray(0, this.chunkUsed)
    this.chunk = Buffer.allocUnsafe(this.chunk.length)
    this.chunkUsed = 0
    await this.sink.write(out)
  }

  /** Pads the last page with zeros and writes out what is left. */
  async end(): Promise<void> {
    if (this.used > 0) {
      this.page.fill(0, this.used)
      await this.emitPage()
    }
    await this.flush()
  }
}

export class E57Writer {
  private readonly pages: PageWriter
  private readonly layout: Layout
  private scan = -1
  private inScan = 0
  private inPacket = 0
  private readonly xs = new Float64Array(E57_RECORDS_PER_PACKET)
  private readonly ys = new Float64Array(E57_RECORDS_PER_PACKET)
  private readonly zs = new Float64Array(E57_RECORDS_PER_PACKET)
  private readonly intensity = new Float32Array(E57_RECORDS_PER_PACKET)
  private readonly rgb = [new Uint8Array(E57_RECORDS_PER_PACKET), new Uint8Array(E57_RECORDS_PER_PACKET), new Uint8Array(E57_RECORDS_PER_PACKET)] as const
  private readonly packet: Uint8Array

  constructor(
    sink: ByteSink,
    private readonly plan: E57Plan,
  ) {
    if (plan.scans.length === 0) throw new ExportError('E57 export: there is no placement to write')
    this.pages = new PageWriter(sink)
    this.layout = layout(plan, plan.guid ?? `{${randomUUID()}}`)
    this.packet = new Uint8Array(packetLength(plan, E57_RECORDS_PER_PACKET))
  }

  get physicalLength(): number {
    return this.layout.physicalLength
  }

  /** The file header; then call startScan(0). */
  async begin(): Promise<void> {
    const header = new Uint8Array(48)
    const v = new DataView(header.buffer)
    header.set(new TextEncoder().encode('ASTM-E57'))
    v.setUint32(8, 1, true)
    v.setUint32(12, 0, true)
    v.setBigUint64(16, BigInt(this.layout.physicalLength), true)
    v.setBigUint64(24, BigInt(physicalOffset(this.layout.xmlLogical)), true)
    v.setBigUint64(32, BigInt(this.layout.xml.length), true)
    v.setBigUint64(40, BigInt(E57_PAGE), true)
    await this.pages.write(header)
  }

  /** Opens scan `index` (in order); its points follow through write(). */
  async startScan(index: number): Promise<void> {
    if (index !== this.scan + 1 || index >= this.plan.scans.length) throw new Error(`E57Writer: scan ${index} out of order`)
    if (this.scan >= 0) await this.closeScan()
    this.scan = index
    this.inScan = 0
    this.inPacket = 0
    const start = this.layout.sectionStarts[index]!
    await this.pages.zeros(start - this.pages.logical)
    const header = new Uint8Array(32)
    const v = new DataView(header.buffer)
    header[0] = 1
    v.setBigUint64(8, BigInt(sectionLength(this.plan, this.plan.scans[index]!.count)), true)
    v.setBigUint64(16, BigInt(physicalOffset(start + 32)), true)
    v.setBigUint64(24, 0n, true)
    await this.pages.write(header)
  }

  /** Points of the open scan, in its own frame. */
  async write(batch: ExportBatch): Promise<void> {
    const scan = this.plan.scans[this.scan]
    if (!scan) throw new Error('E57Writer: startScan first')
    if (this.inScan + batch.count > scan.count) throw new ExportError(`E57 export: more points arrived for '${scan.name}' (${this.inScan + batch.count}) than were counted (${scan.count}); the scans changed while exporting`)
    const p = batch.positions
    const { xs, ys, zs } = this
    const [r, g, b] = this.rgb
    const colors = batch.colors
    let i = 0
    while (i < batch.count) {
      const k0 = this.inPacket
      const take = Math.min(batch.count - i, E57_RECORDS_PER_PACKET - k0)
      for (let j = 0; j < take; j++) {
        const s = (i + j) * 3
        xs[k0 + j] = p[s]!
        ys[k0 + j] = p[s + 1]!
        zs[k0 + j] = p[s + 2]!
      }
      if (this.plan.intensities) {
        if (batch.intensities) this.intensity.set(batch.intensities.subarray(i, i + take), k0)
        else this.intensity.fill(0, k0, k0 + take)
      }
      if (this.plan.colors) {
        for (let j = 0; j < take; j++) {
          const s = (i + j) * 3
          r[k0 + j] = colors ? colors[s]! : 0
          g[k0 + j] = colors ? colors[s + 1]! : 0
          b[k0 + j] = colors ? colors[s + 2]! : 0
        }
      }
      this.inPacket += take
      this.inScan += take
      i += take
      if (this.inPacket === E57_RECORDS_PER_PACKET) await this.emitPacket()
    }
  }

  private async emitPacket(): Promise<void> {
    const n = this.inPacket
    const length = packetLength(this.plan, n)
    const p = this.packet
    const v = new DataView(p.buffer)
    p.fill(0, 0, length)
    p[0] = 1
    v.setUint16(2, length - 1, true)
    const streams: Uint8Array[] = [
      new Uint8Array(this.xs.buffer, 0, n * 8),
      new Uint8Array(this.ys.buffer, 0, n * 8),
      new Uint8Array(this.zs.buffer, 0, n * 8),
      ...(this.plan.intensities ? [new Uint8Array(this.intensity.buffer, 0, n * 4)] : []),
      ...(this.plan.colors ? this.rgb.map((c) => c.subarray(0, n)) : []),
    ]
    v.setUint16(4, streams.length, true)
    let at = 6 + 2 * streams.length
    streams.forEach((s, i) => {
      v.setUint16(6 + 2 * i, s.length, true)
      p.set(s, at)
      at += s.length
    })
    // Typed arrays are little-endian on every platform Node runs on here (x64, arm64), as E2807 wants.
    await this.pages.write(p.subarray(0, length))
    this.inPacket = 0
  }

  private async closeScan(): Promise<void> {
    const scan = this.plan.scans[this.scan]!
    if (this.inScan !== scan.count) throw new ExportError(`E57 export: ${this.inScan} points arrived for '${scan.name}', ${scan.count} were counted; the scans changed while exporting`)
    if (this.inPacket > 0 || scan.count === 0) await this.emitPacket()
  }

  /** Closes the last scan, writes the XML section and pads the last page. */
  async end(): Promise<void> {
    if (this.scan !== this.plan.scans.length - 1) throw new Error(`E57Writer: ${this.plan.scans.length - this.scan - 1} scans were never started`)
    await this.closeScan()
    if (this.pages.logical !== this.layout.xmlLogical) throw new Error(`E57Writer: the binary sections end at ${this.pages.logical}, the layout said ${this.layout.xmlLogical}`)
    await this.pages.write(this.layout.xml)
    await this.pages.end()
  }
}
