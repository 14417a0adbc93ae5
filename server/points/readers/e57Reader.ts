import type { ByteSource } from './byteSource'
import { memorySource } from './byteSource'
import { E57Pages, E57_PAGE_DATA, errorAtPage, logicalToPhysical, physicalToLogical, readE57Header, type E57FileHeader } from './e57Pages'
import {
  DEFAULT_MAX_XML_BYTES,
  child,
  errorAtPath,
  expectType,
  numberAttr,
  numberValue,
  optionalNumber,
  parseE57Xml,
  requireChild,
  stringValue,
  type E57Element,
} from './e57Xml'
import { ScanFormatError, errorAtByte } from './errors'
import { PointSink } from './pointSink'
import { DEFAULT_MAX_POINTS } from './readerBase'
import type { DropReason, E57HeaderInfo, E57ScanInfo, PointReader, ReadSummary, ReaderOptions, Vec3 } from './types'

/**
 * Spanmark's E57 reader, written from ASTM E2807. The file is read through ranged reads (`ByteSource`):
 * the 48-byte header, then the XML section (at the end of the file), then each scan's compressed vector
 * binary section packet by packet, a window of pages at a time, so memory does not grow with the file.
 *
 *   const file = await openE57(source)          // header + XML: file.header.scans lists the data3D entries
 *   await file.readScan(0, { onBatch })         // one scan's points, at its pose (or in its own frame)
 *   await file.readAll({ onBatch })             // every scan, each at its pose, as one cloud
 *
 * Read: cartesianX/Y/Z or sphericalRange/Azimuth/Elevation (turned into cartesian), the invalid-state
 * fields (2 and 1 leave the point out, counted in `dropped`), intensity scaled from intensityLimits to
 * 0-65535, colorRed/Green/Blue scaled from colorLimits to 0-255, rowIndex/columnIndex (batch `rows`,
 * `columns`), each data3D's pose. Fields may be Float (single, double), Integer or ScaledInteger, in the
 * bitpack codec. images2D are not read (a note says so).
 */

export interface E57OpenOptions {
  /** XML sections longer than this are refused. Default 64 MiB. */
  maxXmlBytes?: number
  /** Pages fetched per ranged read while reading points. Default 1024 (1 MiB of file). */
  windowPages?: number
  /** Files with more scans (data3D entries) than this are refused: each becomes a Spanmark scan. Default 1000. */
  maxScans?: number
}

export interface E57ReadOptions extends ReaderOptions {
  /** Place points at their scan's pose (the file's frame). Default true; false keeps the scan's own frame. */
  applyPose?: boolean
}

const WINDOW_PAGES = 1024
const DEFAULT_MAX_SCANS = 1000
/** A field's bytes waiting for the other fields' bytes of the same records. */
const MAX_PENDING_STREAM_BYTES = 64 * 1024 * 1024
const SECTION_HEADER_BYTES = 32
const DATA_PACKET = 1
const INDEX_PACKET = 0
const EMPTY_PACKET = 2

const COORDINATE_FIELDS = {
  cartesian: ['cartesianX', 'cartesianY', 'cartesianZ'],
  spherical: ['sphericalRange', 'sphericalAzimuth', 'sphericalElevation'],
} as const

/** A terminal field of a prototype and how its bitpacked values are decoded. */
interface FieldCodec {
  name: string
  path: string
  kind: 'float32' | 'float64' | 'integer'
  /** Bits a value takes in its bytestream. */
  bits: number
  /** Integer / ScaledInteger: the raw minimum (value = (minimum + packed) * scale + offset). */
  minimum: bigint
  scale: number
  offset: number
  /** The value range the XML declares (scaled), when it declares one. */
  low: number | null
  high: number | null
}

interface ScanPlan {
  info: E57ScanInfo
  element: E57Element
  fields: FieldCodec[]
  fileOffset: number
  intensityRange: [number, number] | null
  colorRanges: [number, number][] | null
}

export class E57File {
  private constructor(
    readonly header: E57HeaderInfo,
    readonly fileHeader: E57FileHeader,
    private readonly pages: E57Pages,
    private readonly plans: ScanPlan[],
    private readonly windowPages: number,
  ) {}

  static async open(source: ByteSource, options: E57OpenOptions = {}): Promise<E57File> {
    return guard(async () => {
      const pages = new E57Pages(source)
      const fileHeader = await readE57Header(source, pages)
      const maxXml = options.maxXmlBytes ?? DEFAULT_MAX_XML_BYTES
      if (fileHeader.xmlLogicalLength > maxXml) {
        throw errorAtByte(32, `the XML section is ${fileHeader.xmlLogicalLength} bytes, more than the ${maxXml} Spanmark reads`)
      }
      const xmlBytes = await pages.readLogical(physicalToLogical(fileHeader.xmlPhysicalOffset), fileHeader.xmlLogicalLength)
      let text: string
      try {
        text = new TextDecoder('utf-8', { fatal: true }).decode(xmlBytes)
      } catch {
        throw errorAtByte(fileHeader.xmlPhysicalOffset, 'the XML section is not valid UTF-8')
      }
      const root = parseE57Xml(text)
      const maxScans = options.maxScans ?? DEFAULT_MAX_SCANS
      const scans = child(root, 'data3D')?.children.length ?? 0
      if (scans > maxScans) throw errorAtPath('/data3D', `the file holds ${scans} scans, more than the ${maxScans} Spanmark takes from one file`)
      const { header, plans } = describe(root, fileHeader)
      return new E57File(header, fileHeader, pages, plans, options.windowPages ?? WINDOW_PAGES)
    })
  }

  get scans(): readonly E57ScanInfo[] {
    return this.header.scans
  }

  /** One scan's points. */
  async readScan(index: number, options: E57ReadOptions): Promise<ReadSummary> {
    const plan = this.plans[index]
    if (!plan) throw new RangeError(`scan ${index} does not exist (the file has ${this.plans.length})`)
    return this.read([plan], options)
  }

  /** Every scan, each at its pose (unless applyPose is false), delivered as one cloud. */
  async readAll(options: E57ReadOptions): Promise<ReadSummary> {
    return this.read(this.plans, options)
  }

  private async read(plans: ScanPlan[], options: E57ReadOptions): Promise<ReadSummary> {
    const declared = plans.reduce((n, p) => n + p.info.recordCount, 0)
    const maxPoints = options.maxPoints ?? DEFAULT_MAX_POINTS
    if (declared > maxPoints) {
      throw errorAtPath(`${plans[0]!.info.path}/points`, `the scans declare ${declared} points, more than the ${maxPoints} allowed`)
    }
    const layout = {
      color: plans.some((p) => p.info.hasColor),
      intensity: plans.some((p) => p.info.hasIntensity),
      uncertainty: false,
      grid: plans.some((p) => p.info.grid !== null),
    }
    let sink: PointSink | null = null
    const dropped: Partial<Record<DropReason, number>> = {}
    try {
      sink = new PointSink(options, layout, () => ({ byte: 0 }))
      for (const plan of plans) await this.decodeScan(plan, sink, dropped, options.applyPose !== false)
      sink.flush()
    } catch (error) {
      if (sink?.inCallback) {
        sink.inCallback = false
        throw error
      }
      throw asFormatError(error)
    }
    if (sink.delivered === 0) {
      throw errorAtPath(plans.length === 1 ? plans[0]!.info.path : '/data3D', `the file holds no valid points${Object.keys(dropped).length ? ` (left out: ${JSON.stringify(dropped)})` : ''}`)
    }
    const header: E57HeaderInfo = { ...this.header, hasColor: layout.color, hasIntensity: layout.intensity, declaredPointCount: declared }
    return { format: 'e57', header, pointCount: sink.delivered, bounds: sink.bounds(), dropped }
  }

  private async decodeScan(plan: ScanPlan, sink: PointSink, dropped: Partial<Record<DropReason, number>>, applyPose: boolean): Promise<void> {
    const { info, fields } = plan
    if (info.recordCount === 0) return
    const pointsPath = `${info.path}/points`
    // The compressed vector's binary section: its header, then packets from dataPhysicalOffset.
    const sectionStart = physicalToLogical(plan.fileOffset)
    const sectionHeader = await this.pages.readLogical(sectionStart, SECTION_HEADER_BYTES)
    const byteAt = plan.fileOffset
    const pageAt = Math.floor(plan.fileOffset / 1024)
    if (sectionHeader[0] !== 1) {
      throw errorAtPage(pageAt, byteAt, `the binary section of ${pointsPath} starts with section id ${sectionHeader[0]}, not 1 (compressed vector)`)
    }
    const view = new DataView(sectionHeader.buffer, sectionHeader.byteOffset, SECTION_HEADER_BYTES)
    const sectionLength = Number(view.getBigUint64(8, true))
    const dataPhysical = Number(view.getBigUint64(16, true))
    const fileLogical = this.pages.pageCount * E57_PAGE_DATA
    const sectionEnd = sectionStart + sectionLength
    if (sectionEnd > fileLogical || sectionLength < SECTION_HEADER_BYTES) {
      throw errorAtPage(pageAt, byteAt + 8, `the binary section of ${pointsPath} declares ${sectionLength} bytes, which runs past the end of the file`)
    }
    let at = physicalToLogical(dataPhysical)
    if (at < sectionStart + SECTION_HEADER_BYTES || at > sectionEnd) {
      throw errorAtPage(pageAt, byteAt + 16, `the binary section of ${pointsPath} gives its data at byte ${dataPhysical}, outside the section`)
    }

    const window = new PageWindow(this.pages, this.windowPages)
    const streams = fields.map(() => new BitStream())
    const chunk = Math.min(sink.capacity, 65536)
    const values = fields.map(() => new Float64Array(chunk))
    const converter = new RecordConverter(plan, applyPose, values)
    let done = 0
    while (done < info.recordCount) {
      if (at >= sectionEnd) break
      const where = (offset: number, message: string) => {
        const physical = logicalToPhysical(offset)
        return errorAtPage(Math.floor(physical / 1024), physical, message)
      }
      if (sectionEnd - at < 4) throw where(at, `the binary section of ${pointsPath} ends inside a packet header`)
      const head = await window.read(at, 4)
      const type = head[0]!
      const length = (head[2]! | (head[3]! << 8)) + 1
      if (at + length > sectionEnd) throw where(at, `a packet of ${length} bytes runs past the end of ${pointsPath}'s binary section`)
      if (type === DATA_PACKET) {
        const packet = await window.read(at, length)
        const count = packet[4]! | (packet[5]! << 8)
        if (count !== fields.length) {
          throw where(at, `a data packet of ${pointsPath} has ${count} bytestreams, but its prototype has ${fields.length} fields`)
        }
        let payload = 6 + 2 * count
        if (payload > length) throw where(at, `a data packet's bytestream table runs past its ${length} bytes`)
        for (let s = 0; s < count; s++) {
          const n = packet[6 + 2 * s]! | (packet[7 + 2 * s]! << 8)
          if (payload + n > length) throw where(at, `bytestream ${s} (${fields[s]!.name}) of a data packet runs past the packet's ${length} bytes`)
          streams[s]!.append(packet.subarray(payload, payload + n))
          if (streams[s]!.pending > MAX_PENDING_STREAM_BYTES) {
            throw where(at, `bytestream ${fields[s]!.name} of ${pointsPath} runs more than ${MAX_PENDING_STREAM_BYTES} bytes ahead of the others`)
          }
          payload += n
        }
      } else if (type !== INDEX_PACKET && type !== EMPTY_PACKET) {
        throw where(at, `packet type ${type} is not one of the standard's (0 index, 1 data, 2 empty)`)
      }
      at += length
      // Every record whose values are all here.
      let ready = info.recordCount - done
      for (let f = 0; f < fields.length; f++) ready = Math.min(ready, streams[f]!.available(fields[f]!.bits))
      while (ready > 0) {
        const n = Math.min(ready, chunk)
        for (let f = 0; f < fields.length; f++) decodeValues(streams[f]!, fields[f]!, values[f]!, n)
        converter.emit(n, sink, dropped)
        done += n
        ready -= n
      }
      for (const s of streams) s.compact()
    }
    if (done < info.recordCount) {
      throw errorAtPath(pointsPath, `recordCount is ${info.recordCount}, but the binary section (from byte ${plan.fileOffset}) ends after ${done} records`)
    }
  }
}

export function openE57(source: ByteSource, options?: E57OpenOptions): Promise<E57File> {
  return E57File.open(source, options)
}

// ---------------------------------------------------------------------------------------------------------
// The XML: which scans, which fields.

function describe(root: E57Element, fileHeader: E57FileHeader): { header: E57HeaderInfo; plans: ScanPlan[] } {
  const formatName = stringValue(child(root, 'formatName'))
  if (formatName !== null && formatName !== 'ASTM E57 3D Imaging Data File') {
    throw errorAtPath('/formatName', `is '${formatName}', not 'ASTM E57 3D Imaging Data File'`)
  }
  const notes: string[] = []
  const data3D = child(root, 'data3D')
  if (data3D) expectType(data3D, 'Vector')
  const images2D = child(root, 'images2D')
  const images = images2D ? images2D.children.length : 0
  if (images > 0) notes.push(`${images} image${images === 1 ? '' : 's'} (images2D) not read: Spanmark keeps the points only`)
  const plans = (data3D?.children ?? []).map((scan, index) => planScan(scan, index))
  if (plans.length === 0) throw errorAtPath('/data3D', 'the file holds no scans (data3D is missing or empty)')
  const header: E57HeaderInfo = {
    format: 'e57',
    versionMajor: fileHeader.versionMajor,
    versionMinor: fileHeader.versionMinor,
    guid: stringValue(child(root, 'guid')),
    scans: plans.map((p) => p.info),
    images,
    notes,
    hasColor: plans.some((p) => p.info.hasColor),
    hasIntensity: plans.some((p) => p.info.hasIntensity),
    hasUncertainty: false,
    declaredPointCount: plans.reduce((n, p) => n + p.info.recordCount, 0),
  }
  return { header, plans }
}

function planScan(scan: E57Element, index: number): ScanPlan {
  expectType(scan, 'Structure')
  const points = requireChild(scan, 'points', 'CompressedVector')
  const recordCount = numberAttr(points, 'recordCount', NaN)
  if (!Number.isSafeInteger(recordCount) || recordCount < 0) throw errorAtPath(points.path, `recordCount '${points.attrs.recordCount ?? ''}' is missing or not a whole number`)
  const fileOffset = numberAttr(points, 'fileOffset', NaN)
  if (!Number.isSafeInteger(fileOffset) || fileOffset < 0) throw errorAtPath(points.path, `fileOffset '${points.attrs.fileOffset ?? ''}' is missing or not a whole number`)
  const prototype = requireChild(points, 'prototype', 'Structure')
  const fields: FieldCodec[] = []
  collectFields(prototype, '', fields)
  const names = new Set(fields.map((f) => f.name))
  const codecs = child(points, 'codecs')
  for (const codec of codecs?.children ?? []) {
    const kinds = codec.children.filter((c) => c.name !== 'inputs').map((c) => c.name)
    const unsupported = kinds.find((k) => k !== 'bitPackCodec')
    if (unsupported) throw errorAtPath(codec.path, `codec '${unsupported}' is not supported (Spanmark reads the bitpack codec)`)
  }
  const has = (list: readonly string[]) => list.every((n) => names.has(n))
  const coordinates = has(COORDINATE_FIELDS.cartesian) ? 'cartesian' : has(COORDINATE_FIELDS.spherical) ? 'spherical' : null
  if (!coordinates) {
    throw errorAtPath(prototype.path, `has neither cartesianX/Y/Z nor sphericalRange/Azimuth/Elevation (fields: ${[...names].join(', ') || 'none'})`)
  }

  const pose = readPose(scan)
  const hasColor = ['colorRed', 'colorGreen', 'colorBlue'].every((n) => names.has(n))
  const hasIntensity = names.has('intensity')
  const fieldRange = (name: string): [number, number] | null => {
    const f = fields.find((x) => x.name === name)
    return f && f.low !== null && f.high !== null ? [f.low, f.high] : null
  }
  const limits = child(scan, 'intensityLimits')
  let intensityRange: [number, number] | null = null
  if (hasIntensity) {
    const lo = limits ? optionalNumber(limits, 'intensityMinimum') : undefined
    const hi = limits ? optionalNumber(limits, 'intensityMaximum') : undefined
    intensityRange = lo !== undefined && hi !== undefined ? [lo, hi] : fieldRange('intensity')
  }
  let colorRanges: [number, number][] | null = null
  if (hasColor) {
    const colorLimits = child(scan, 'colorLimits')
    colorRanges = (['Red', 'Green', 'Blue'] as const).map((c) => {
      const lo = colorLimits ? optionalNumber(colorLimits, `color${c}Minimum`) : undefined
      const hi = colorLimits ? optionalNumber(colorLimits, `color${c}Maximum`) : undefined
      return lo !== undefined && hi !== undefined ? [lo, hi] : (fieldRange(`color${c}`) ?? [0, 255])
    })
  }
  let grid: E57ScanInfo['grid'] = null
  if (names.has('rowIndex') && names.has('columnIndex')) {
    const bounds = child(scan, 'indexBounds')
    const rowMax = bounds ? optionalNumber(bounds, 'rowMaximum') : undefined
    const colMax = bounds ? optionalNumber(bounds, 'columnMaximum') : undefined
    const rowMin = (bounds ? optionalNumber(bounds, 'rowMinimum') : undefined) ?? 0
    const colMin = (bounds ? optionalNumber(bounds, 'columnMinimum') : undefined) ?? 0
    const rows = rowMax !== undefined ? rowMax - rowMin + 1 : (fieldRange('rowIndex')?.[1] ?? 0) + 1
    const columns = colMax !== undefined ? colMax - colMin + 1 : (fieldRange('columnIndex')?.[1] ?? 0) + 1
    grid = { rows, columns }
  }
  const info: E57ScanInfo = {
    index,
    path: scan.path,
    name: stringValue(child(scan, 'name')),
    guid: stringValue(child(scan, 'guid')),
    description: stringValue(child(scan, 'description')),
    recordCount,
    pose,
    coordinates,
    hasColor,
    hasIntensity,
    grid,
    fields: fields.map((f) => f.name),
  }
  return { info, element: scan, fields, fileOffset, intensityRange, colorRanges }
}

function readPose(scan: E57Element): E57ScanInfo['pose'] {
  const pose = child(scan, 'pose')
  const identity: E57ScanInfo['pose'] = { rotation: [1, 0, 0, 0], translation: [0, 0, 0] }
  if (!pose) return identity
  expectType(pose, 'Structure')
  const rotation = child(pose, 'rotation')
  const translation = child(pose, 'translation')
  if (rotation) {
    expectType(rotation, 'Structure')
    const q = (['w', 'x', 'y', 'z'] as const).map((k) => numberValue(requireChild(rotation, k))) as [number, number, number, number]
    const norm = Math.hypot(...q)
    if (!(norm > 0) || Math.abs(norm - 1) > 1e-3) throw errorAtPath(rotation.path, `the rotation quaternion (w x y z = ${q.join(' ')}) is not of unit length (${norm})`)
    identity.rotation = q.map((v) => v / norm) as [number, number, number, number]
  }
  if (translation) {
    expectType(translation, 'Structure')
    identity.translation = (['x', 'y', 'z'] as const).map((k) => numberValue(requireChild(translation, k))) as Vec3
  }
  return identity
}

function collectFields(structure: E57Element, prefix: string, out: FieldCodec[]): void {
  for (const field of structure.children) {
    const name = prefix ? `${prefix}/${field.name}` : field.name
    if (field.type === 'Structure') {
      collectFields(field, name, out)
      continue
    }
    out.push(fieldCodec(field, name))
  }
}

const INT64_MIN = -(2n ** 63n)
const INT64_MAX = 2n ** 63n - 1n

function bigAttr(field: E57Element, name: string, fallback: bigint): bigint {
  const raw = field.attrs[name]
  if (raw === undefined) return fallback
  try {
    return BigInt(raw.trim())
  } catch {
    throw errorAtPath(field.path, `attribute ${name} '${raw}' is not a whole number`)
  }
}

function fieldCodec(field: E57Element, name: string): FieldCodec {
  const base = { name, path: field.path, minimum: 0n, scale: 1, offset: 0, low: null, high: null }
  switch (field.type) {
    case 'Float': {
      const precision = field.attrs.precision ?? 'double'
      if (precision !== 'single' && precision !== 'double') throw errorAtPath(field.path, `precision '${precision}' is neither 'single' nor 'double'`)
      const low = field.attrs.minimum !== undefined ? numberAttr(field, 'minimum', 0) : null
      const high = field.attrs.maximum !== undefined ? numberAttr(field, 'maximum', 0) : null
      return { ...base, kind: precision === 'single' ? 'float32' : 'float64', bits: precision === 'single' ? 32 : 64, low, high }
    }
    case 'Integer':
    case 'ScaledInteger': {
      const minimum = bigAttr(field, 'minimum', INT64_MIN)
      const maximum = bigAttr(field, 'maximum', INT64_MAX)
      if (maximum < minimum) throw errorAtPath(field.path, `maximum ${maximum} is below minimum ${minimum}`)
      const scale = field.type === 'ScaledInteger' ? numberAttr(field, 'scale', 1) : 1
      const offset = field.type === 'ScaledInteger' ? numberAttr(field, 'offset', 0) : 0
      if (scale === 0) throw errorAtPath(field.path, 'scale is 0')
      // ceil(log2(maximum - minimum + 1)) bits: the bit length of the span.
      const bits = (maximum - minimum).toString(2).length - (maximum === minimum ? 1 : 0)
      const a = Number(minimum) * scale + offset
      const b = Number(maximum) * scale + offset
      return { ...base, kind: 'integer', bits, minimum, scale, offset, low: Math.min(a, b), high: Math.max(a, b) }
    }
    case 'String':
      throw errorAtPath(field.path, 'String fields in point records are not read')
    default:
      throw errorAtPath(field.path, `a ${field.type} cannot be a field of a point record`)
  }
}

// ---------------------------------------------------------------------------------------------------------
// Binary: windows of pages, bytestreams, bitpack.

/** Logical bytes of the file through a window of checked pages. */
class PageWindow {
  private data: Uint8Array = new Uint8Array(0)
  private start = 0
  /** Reused for every window (a packet is copied into its streams before the next read). */
  private buffer: Uint8Array
  constructor(private readonly pages: E57Pages, private readonly windowPages: number) {
    this.buffer = new Uint8Array(windowPages * E57_PAGE_DATA)
  }

  async read(logical: number, length: number): Promise<Uint8Array> {
    if (logical < this.start || logical + length > this.start + this.data.length) {
      const first = Math.floor(logical / E57_PAGE_DATA)
      const last = Math.floor((logical + length - 1) / E57_PAGE_DATA)
      const count = Math.min(Math.max(last - first + 1, this.windowPages), this.pages.pageCount - first)
      this.data = await this.pages.readPages(first, count, this.buffer)
      this.start = first * E57_PAGE_DATA
    }
    return this.data.subarray(logical - this.start, logical - this.start + length)
  }
}

/** One field's bytestream: bytes in arrival order, read LSB first. */
class BitStream {
  bytes = new Uint8Array(4096)
  length = 0
  /** Bits already read from bytes[0]. */
  bit = 0

  get pending(): number {
    return this.length
  }

  append(data: Uint8Array): void {
    if (this.length + data.length + 8 > this.bytes.length) {
      const grown = new Uint8Array(Math.max(this.bytes.length * 2, this.length + data.length + 8))
      grown.set(this.bytes.subarray(0, this.length))
      this.bytes = grown
    }
    this.bytes.set(data, this.length)
    this.length += data.length
  }

  available(bits: number): number {
    if (bits === 0) return Infinity
    return Math.floor((this.length * 8 - this.bit) / bits)
  }

  /** Drops the bytes read so far, once they are many (so a stream running ahead is not copied at every packet). */
  compact(): void {
    const whole = this.bit >> 3
    if (whole === 0 || (whole < 65536 && whole * 2 < this.length)) return
    this.bytes.copyWithin(0, whole, this.length)
    this.length -= whole
    this.bit -= whole * 8
    this.bytes.fill(0, this.length, this.length + 8)
  }
}

function decodeValues(stream: BitStream, field: FieldCodec, out: Float64Array, n: number): void {
  const b = stream.bytes
  let bit = stream.bit
  if (field.kind === 'float32' || field.kind === 'float64') {
    // Floats are whole bytes in their stream.
    const size = field.kind === 'float32' ? 4 : 8
    let at = bit >> 3
    const view = new DataView(b.buffer, b.byteOffset)
    for (let i = 0; i < n; i++, at += size) out[i] = size === 4 ? view.getFloat32(at, true) : view.getFloat64(at, true)
    stream.bit = at * 8
    return
  }
  const w = field.bits
  if (w === 0) {
    out.fill(Number(field.minimum) * field.scale + field.offset, 0, n)
    return
  }
  if (w <= 32 && field.minimum >= -(2n ** 52n) && field.minimum <= 2n ** 52n) {
    const min = Number(field.minimum)
    const { scale, offset } = field
    const mod = 2 ** w
    for (let i = 0; i < n; i++, bit += w) {
      const at = bit >> 3
      const shift = bit & 7
      // Up to 39 bits from 5 bytes: exact in a double.
      const word = b[at]! + b[at + 1]! * 256 + b[at + 2]! * 65536 + b[at + 3]! * 16777216 + b[at + 4]! * 4294967296
      const raw = Math.floor(word / (1 << shift)) % mod
      out[i] = (min + raw) * scale + offset
    }
    stream.bit = bit
    return
  }
  // Wider fields (up to 64 bits) through BigInt.
  const mask = (1n << BigInt(w)) - 1n
  for (let i = 0; i < n; i++, bit += w) {
    const at = bit >> 3
    const shift = BigInt(bit & 7)
    let word = 0n
    for (let k = Math.ceil(((bit & 7) + w) / 8) - 1; k >= 0; k--) word = (word << 8n) | BigInt(b[at + k] ?? 0)
    const raw = (word >> shift) & mask
    out[i] = Number(field.minimum + raw) * field.scale + field.offset
  }
  stream.bit = bit
}

/** Decoded values of a run of records -> points in the sink. */
class RecordConverter {
  private readonly x: Float64Array
  private readonly y: Float64Array
  private readonly z: Float64Array
  private readonly state: Float64Array | null
  private readonly color: Float64Array[] | null
  private readonly colorInvalid: Float64Array | null
  private readonly intensity: Float64Array | null
  private readonly intensityInvalid: Float64Array | null
  private readonly row: Float64Array | null
  private readonly column: Float64Array | null
  private readonly spherical: boolean
  private readonly m: number[]
  private readonly t: Vec3

  constructor(private readonly plan: ScanPlan, applyPose: boolean, values: Float64Array[]) {
    const at = (name: string) => {
      const i = plan.fields.findIndex((f) => f.name === name)
      return i >= 0 ? values[i]! : null
    }
    const { info } = plan
    this.spherical = info.coordinates === 'spherical'
    const names = COORDINATE_FIELDS[info.coordinates]
    this.x = at(names[0])!
    this.y = at(names[1])!
    this.z = at(names[2])!
    this.state = at(this.spherical ? 'sphericalInvalidState' : 'cartesianInvalidState')
    this.color = info.hasColor ? [at('colorRed')!, at('colorGreen')!, at('colorBlue')!] : null
    this.colorInvalid = at('isColorInvalid')
    this.intensity = info.hasIntensity ? at('intensity') : null
    this.intensityInvalid = at('isIntensityInvalid')
    this.row = info.grid ? at('rowIndex') : null
    this.column = info.grid ? at('columnIndex') : null
    const [w, qx, qy, qz] = applyPose ? info.pose.rotation : [1, 0, 0, 0]
    // The rotation matrix of a unit quaternion (row-major).
    this.m = [
      1 - 2 * (qy * qy + qz * qz), 2 * (qx * qy - w * qz), 2 * (qx * qz + w * qy),
      2 * (qx * qy + w * qz), 1 - 2 * (qx * qx + qz * qz), 2 * (qy * qz - w * qx),
      2 * (qx * qz - w * qy), 2 * (qy * qz + w * qx), 1 - 2 * (qx * qx + qy * qy),
    ]
    this.t = applyPose ? info.pose.translation : [0, 0, 0]
  }

  emit(n: number, sink: PointSink, dropped: Partial<Record<DropReason, number>>): void {
    const { x, y, z, state, color, colorInvalid, intensity, intensityInvalid, row, column, m, t } = this
    const [m0, m1, m2, m3, m4, m5, m6, m7, m8] = m as [number, number, number, number, number, number, number, number, number]
    const iRange = this.plan.intensityRange
    const iLow = iRange ? iRange[0] : 0
    const iScale = iRange && iRange[1] > iRange[0] ? 65535 / (iRange[1] - iRange[0]) : 1
    const cRanges = this.plan.colorRanges
    let w = sink.count
    let positions = sink.positions
    for (let i = 0; i < n; i++) {
      if (state) {
        const s = state[i]!
        if (s === 2) {
          dropped.invalidState = (dropped.invalidState ?? 0) + 1
          continue
        }
        if (s === 1) {
          dropped.directionOnly = (dropped.directionOnly ?? 0) + 1
          continue
        }
      }
      let px = x[i]!
      let py = y[i]!
      let pz = z[i]!
      if (this.spherical) {
        // Range, azimuth (from +x towards +y), elevation (up from the xy plane), radians.
        const r = px
        const azimuth = py
        const elevation = pz
        const horizontal = r * Math.cos(elevation)
        px = horizontal * Math.cos(azimuth)
        py = horizontal * Math.sin(azimuth)
        pz = r * Math.sin(elevation)
      }
      const j = w * 3
      positions[j] = m0 * px + m1 * py + m2 * pz + t[0]
      positions[j + 1] = m3 * px + m4 * py + m5 * pz + t[1]
      positions[j + 2] = m6 * px + m7 * py + m8 * pz + t[2]
      if (sink.colors) {
        if (color && cRanges && !(colorInvalid && colorInvalid[i] !== 0)) {
          for (let c = 0; c < 3; c++) {
            const [lo, hi] = cRanges[c]!
            const v = hi > lo ? ((color[c]![i]! - lo) * 255) / (hi - lo) : color[c]![i]!
            sink.colors[j + c] = v <= 0 ? 0 : v >= 255 ? 255 : Math.round(v)
          }
        } else {
          sink.colors[j] = sink.colors[j + 1] = sink.colors[j + 2] = 0
        }
      }
      if (sink.intensities) {
        sink.intensities[w] = intensity && !(intensityInvalid && intensityInvalid[i] !== 0) ? (intensity[i]! - iLow) * iScale : 0
      }
      if (sink.rows && sink.columns) {
        sink.rows[w] = row ? row[i]! : -1
        sink.columns[w] = column ? column[i]! : -1
      }
      w++
      if (w === sink.capacity) {
        sink.commit(w - sink.count)
        w = sink.count
        positions = sink.positions
      }
    }
    sink.commit(w - sink.count)
  }
}

// ---------------------------------------------------------------------------------------------------------

async function guard<T>(run: () => Promise<T>): Promise<T> {
  try {
    return await run()
  } catch (error) {
    throw asFormatError(error)
  }
}

function asFormatError(error: unknown): unknown {
  if (error instanceof ScanFormatError) return error
  if (error instanceof RangeError && /does not exist/.test(error.message)) return error
  const detail = error instanceof Error ? error.message : String(error)
  const wrapped = errorAtByte(0, `the E57 file could not be read (${detail})`)
  wrapped.cause = error
  return wrapped
}

/**
 * The push interface of the other readers, for E57 files held in memory (tests, `readAll`): the pushed
 * bytes are kept (up to `maxInMemoryBytes`, default 256 MiB) and read at end(). Uploads are read through
 * `openE57` with ranged reads instead (the ingest does so), which holds no more than a window of pages.
 */
export class E57MemoryReader implements PointReader {
  readonly format = 'e57' as const
  header: E57HeaderInfo | null = null
  pointCount = 0
  dropped: Partial<Record<DropReason, number>> = {}
  private chunks: Uint8Array[] = []
  private size = 0
  private failure: unknown = null
  private readonly cap: number

  constructor(private readonly options: ReaderOptions & { maxInMemoryBytes?: number }) {
    this.cap = options.maxInMemoryBytes ?? 256 * 1024 * 1024
  }

  push(chunk: Uint8Array): void {
    if (this.failure) throw this.failure
    if (this.size + chunk.length > this.cap) {
      this.failure = errorAtByte(this.size, `an E57 file held in memory is limited to ${this.cap} bytes; read it through ranged reads (openE57)`)
      throw this.failure
    }
    this.chunks.push(chunk.slice())
    this.size += chunk.length
  }

  async end(): Promise<ReadSummary> {
    if (this.failure) throw this.failure
    try {
      const bytes = new Uint8Array(this.size)
      let at = 0
      for (const c of this.chunks) {
        bytes.set(c, at)
        at += c.length
      }
      this.chunks = []
      if (bytes.length === 0) throw errorAtByte(0, 'the file is empty')
      const file = await openE57(memorySource(bytes))
      this.header = file.header
      const onBatch = this.options.onBatch
      const summary = await file.readAll({ ...this.options, onBatch: (b) => { this.pointCount += b.count; onBatch(b) } })
      this.header = summary.header as E57HeaderInfo
      this.dropped = summary.dropped
      return summary
    } catch (error) {
      this.failure = error
      throw error
    }
  }
}
