import { crc32c } from '@aws-crypto/crc32c'
import type { ByteSource } from './byteSource'
import { ScanFormatError, errorAtByte } from './errors'

/**
 * E57's paged layer (ASTM E2807, "file header" and "physical pages"): the file is a run of 1024-byte
 * physical pages, each 1020 bytes of data followed by a CRC-32C (Castagnoli) of those 1020 bytes, stored
 * most significant byte first (as the files of the format's reference library store it). Everything above
 * this layer (XML, binary sections, packets) is addressed in logical bytes, the data bytes of the pages end
 * to end; the XML and section offsets the file gives are physical offsets.
 */

export const E57_PAGE_SIZE = 1024
export const E57_PAGE_DATA = 1020
export const E57_HEADER_BYTES = 48

export interface E57FileHeader {
  versionMajor: number
  versionMinor: number
  physicalLength: number
  xmlPhysicalOffset: number
  xmlLogicalLength: number
  pageSize: number
}

/** `page 3 (byte 3072): message`, byte being the physical offset in the file. */
export function errorAtPage(page: number, byte: number, message: string): ScanFormatError {
  return new ScanFormatError(`page ${page} (byte ${byte}): ${message}`, { byte })
}

export function physicalToLogical(physical: number): number {
  const inPage = physical % E57_PAGE_SIZE
  if (inPage >= E57_PAGE_DATA) {
    throw errorAtByte(physical, `offset ${physical} points into the checksum of page ${Math.floor(physical / E57_PAGE_SIZE)}`)
  }
  return Math.floor(physical / E57_PAGE_SIZE) * E57_PAGE_DATA + inPage
}

export function logicalToPhysical(logical: number): number {
  return Math.floor(logical / E57_PAGE_DATA) * E57_PAGE_SIZE + (logical % E57_PAGE_DATA)
}

/** Reads checked pages of an E57 file through ranged reads; no more than one window is held. */
export class E57Pages {
  readonly pageCount: number

  constructor(private readonly source: ByteSource) {
    this.pageCount = Math.ceil(source.size / E57_PAGE_SIZE)
  }

  /** The data bytes of pages [first, first + count), each page's checksum checked (into `into` when it is long enough). */
  async readPages(first: number, count: number, into?: Uint8Array): Promise<Uint8Array> {
    if (first < 0 || first + count > this.pageCount) {
      const page = Math.max(first, this.pageCount)
      throw errorAtPage(page, page * E57_PAGE_SIZE, `the file ends before this page (it has ${this.pageCount} pages, ${this.source.size} bytes)`)
    }
    const raw = await this.source.read(first * E57_PAGE_SIZE, count * E57_PAGE_SIZE)
    const out = into && into.length >= count * E57_PAGE_DATA ? into.subarray(0, count * E57_PAGE_DATA) : new Uint8Array(count * E57_PAGE_DATA)
    for (let i = 0; i < count; i++) {
      const page = first + i
      const at = i * E57_PAGE_SIZE
      if (raw.length < at + E57_PAGE_SIZE) {
        throw errorAtPage(page, page * E57_PAGE_SIZE, `the file ends inside this page: ${Math.max(0, raw.length - at)} of its ${E57_PAGE_SIZE} bytes are there (truncated file)`)
      }
      const data = raw.subarray(at, at + E57_PAGE_DATA)
      const stored = ((raw[at + 1020]! << 24) | (raw[at + 1021]! << 16) | (raw[at + 1022]! << 8) | raw[at + 1023]!) >>> 0
      const computed = crc32c(data) >>> 0
      if (stored !== computed) {
        throw errorAtPage(page, page * E57_PAGE_SIZE + E57_PAGE_DATA, `CRC-32C checksum mismatch: stored 0x${hex(stored)}, computed 0x${hex(computed)} over the page's 1020 data bytes (the file is damaged)`)
      }
      out.set(data, i * E57_PAGE_DATA)
    }
    return out
  }

  /** `length` logical bytes starting at a logical offset. */
  async readLogical(logical: number, length: number): Promise<Uint8Array> {
    if (length === 0) return new Uint8Array(0)
    const first = Math.floor(logical / E57_PAGE_DATA)
    const last = Math.floor((logical + length - 1) / E57_PAGE_DATA)
    const data = await this.readPages(first, last - first + 1)
    const start = logical - first * E57_PAGE_DATA
    return data.subarray(start, start + length)
  }
}

function hex(n: number): string {
  return n.toString(16).padStart(8, '0')
}

/** Reads and checks the 48-byte file header (page 0's checksum included). */
export async function readE57Header(source: ByteSource, pages: E57Pages): Promise<E57FileHeader> {
  const size = source.size
  if (size < E57_PAGE_SIZE) {
    throw errorAtPage(0, 0, `the file ends inside this page: ${size} of its ${E57_PAGE_SIZE} bytes are there (an E57 file is whole 1024-byte pages)`)
  }
  if (size % E57_PAGE_SIZE !== 0) {
    const page = Math.floor(size / E57_PAGE_SIZE)
    throw errorAtPage(page, page * E57_PAGE_SIZE, `the file ends inside this page: ${size % E57_PAGE_SIZE} of its ${E57_PAGE_SIZE} bytes are there (truncated file)`)
  }
  const head = await pages.readPages(0, 1)
  const view = new DataView(head.buffer, head.byteOffset, E57_HEADER_BYTES)
  const signature = String.fromCharCode(...head.subarray(0, 8))
  if (signature !== 'ASTM-E57') throw errorAtByte(0, `the file signature is '${signature}', not 'ASTM-E57'`)
  const u64 = (at: number, name: string): number => {
    const v = view.getBigUint64(at, true)
    if (v > BigInt(Number.MAX_SAFE_INTEGER)) throw errorAtByte(at, `header field '${name}' is ${v}, beyond any file`)
    return Number(v)
  }
  const header: E57FileHeader = {
    versionMajor: view.getUint32(8, true),
    versionMinor: view.getUint32(12, true),
    physicalLength: u64(16, 'filePhysicalLength'),
    xmlPhysicalOffset: u64(24, 'xmlPhysicalOffset'),
    xmlLogicalLength: u64(32, 'xmlLogicalLength'),
    pageSize: u64(40, 'pageSize'),
  }
  if (header.versionMajor !== 1) throw errorAtByte(8, `major version ${header.versionMajor} is not read (only version 1 of ASTM E2807)`)
  if (header.pageSize !== E57_PAGE_SIZE) throw errorAtByte(40, `page size ${header.pageSize} is not the standard's 1024`)
  if (header.physicalLength !== size) {
    throw errorAtByte(16, `the header gives a file length of ${header.physicalLength} bytes but the file has ${size} (${header.physicalLength > size ? 'truncated' : 'extra bytes after the end'})`)
  }
  if (header.xmlPhysicalOffset < E57_HEADER_BYTES || header.xmlPhysicalOffset >= size) {
    throw errorAtByte(24, `the XML section's offset ${header.xmlPhysicalOffset} is outside the file (${size} bytes)`)
  }
  const xmlEnd = logicalToPhysical(physicalToLogical(header.xmlPhysicalOffset) + header.xmlLogicalLength)
  if (header.xmlLogicalLength === 0 || xmlEnd > size) {
    throw errorAtByte(32, `the XML section (${header.xmlLogicalLength} bytes from byte ${header.xmlPhysicalOffset}) does not fit in the file (${size} bytes)`)
  }
  return header
}
