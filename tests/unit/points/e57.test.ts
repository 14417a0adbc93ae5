import { existsSync, readFileSync } from 'node:fs'
import { fileURLToPath } from 'node:url'
import { crc32c } from '@aws-crypto/crc32c'
import { describe, expect, it } from 'vitest'
import { ScanFormatError, detectFormat, memorySource, openE57, readAll, type PointBatch, type ReadSummary } from '../../../server/points/readers/index'
import { sampleE57, type ExpectedPoint } from './lib/e57Samples'
import { crc32cReference, writeE57, type E57FileSpec } from './lib/e57Writer'

/**
 * The E57 reader against files written from ASTM E2807's tables (lib/e57Writer.ts), point by point, and
 * against a file written by the format's reference library (libE57Format's public test data).
 */

const text = (s: string) => new TextEncoder().encode(s)

function collect(): { batches: PointBatch[]; onBatch: (b: PointBatch) => void } {
  const batches: PointBatch[] = []
  return { batches, onBatch: (b) => batches.push(b) }
}

function points(batches: PointBatch[]) {
  const out: { p: number[]; c?: number[]; i?: number; row?: number; column?: number }[] = []
  for (const b of batches) {
    for (let k = 0; k < b.count; k++) {
      out.push({
        p: [b.positions[3 * k]!, b.positions[3 * k + 1]!, b.positions[3 * k + 2]!],
        c: b.colors ? [b.colors[3 * k]!, b.colors[3 * k + 1]!, b.colors[3 * k + 2]!] : undefined,
        i: b.intensities?.[k],
        row: b.rows?.[k],
        column: b.columns?.[k],
      })
    }
  }
  return out
}

function close(actual: number[], expected: number[], tolerance: number, what: string): void {
  for (let k = 0; k < 3; k++) {
    if (!(Math.abs(actual[k]! - expected[k]!) <= tolerance)) throw new Error(`${what}: ${actual.join(' ')} is not ${expected.join(' ')}`)
  }
}

async function failure(bytes: Uint8Array, read: 'open' | 'all' = 'all', options = {}): Promise<ScanFormatError> {
  const run = async () => {
    const file = await openE57(memorySource(bytes), options)
    if (read === 'all') await file.readAll({ onBatch: () => {} })
  }
  const error = await run().then(() => new Error('read without an error'), (e: unknown) => e)
  expect(error).toBeInstanceOf(ScanFormatError)
  return error as ScanFormatError
}

describe('CRC-32C', () => {
  it('the package and the bitwise definition give RFC 3720 B.4\'s check value and agree on a page', () => {
    // RFC 3720 appendix B.4: CRC-32C of the ASCII string "123456789" is 0xE3069283.
    expect(crc32c(text('123456789')) >>> 0).toBe(0xe3069283)
    expect(crc32cReference(text('123456789'))).toBe(0xe3069283)
    const page = Uint8Array.from({ length: 1020 }, (_, i) => (i * 31 + 7) & 0xff)
    expect(crc32c(page) >>> 0).toBe(crc32cReference(page))
  })
})

describe('E57 from the standard\'s tables', () => {
  const { spec, expected, dropped } = sampleE57()
  const written = writeE57(spec)

  it('is recognised by its signature', () => {
    expect(detectFormat(written.bytes.subarray(0, 4096), 'site.e57')).toBe('e57')
    expect(detectFormat(written.bytes.subarray(0, 4096), 'upload')).toBe('e57')
  })

  it('lists the scans with their poses, fields, grids and counts; images are noted, not read', async () => {
    const file = await openE57(memorySource(written.bytes))
    expect(file.scans.map((s) => [s.name, s.recordCount, s.coordinates, s.hasColor, s.hasIntensity])).toEqual([
      ['north bay', 3000, 'cartesian', true, true],
      ['stair core', 500, 'spherical', false, true],
      [null, 400, 'cartesian', true, false],
    ])
    expect(file.scans[0]!.grid).toEqual({ rows: 30, columns: 100 })
    expect(file.scans[0]!.pose.translation).toEqual([100, 200, 5])
    expect(file.scans[1]!.pose.rotation).toEqual([0, 1, 0, 0])
    expect(file.header.images).toBe(2)
    expect(file.header.notes.join(' ')).toContain('2 images (images2D) not read')
    expect(file.header.declaredPointCount).toBe(3900)
  })

  it('every scan at its pose, point by point: positions, colour, intensity, row and column', async () => {
    const file = await openE57(memorySource(written.bytes), { windowPages: 3 })
    for (let s = 0; s < 3; s++) {
      const { batches, onBatch } = collect()
      const summary = await file.readScan(s, { onBatch, batchSize: 777 })
      const got = points(batches)
      const want = expected.filter((e) => e.scan === s)
      expect(got.length, `scan ${s}`).toBe(want.length)
      expect(summary.pointCount).toBe(want.length)
      want.forEach((e: ExpectedPoint, k) => {
        const g = got[k]!
        close(g.p, e.world, 1e-9 * Math.max(1, Math.hypot(...e.world)), `scan ${s} record ${e.record}`)
        if (e.color) expect(g.c, `colour of scan ${s} record ${e.record}`).toEqual(e.color)
        if (e.intensity !== undefined) expect(Math.abs(g.i! - e.intensity), `intensity of scan ${s} record ${e.record}`).toBeLessThan(0.01)
        if (e.row !== undefined) expect([g.row, g.column]).toEqual([e.row, e.column])
      })
    }
  })

  it('without the pose, points stay in their scan\'s own frame', async () => {
    const file = await openE57(memorySource(written.bytes))
    const { batches, onBatch } = collect()
    await file.readScan(0, { onBatch, applyPose: false })
    const want = expected.filter((e) => e.scan === 0)
    points(batches).forEach((g, k) => close(g.p, want[k]!.local, 1e-9 * 20, `record ${want[k]!.record}`))
  })

  it('all scans as one cloud: the count, the invalid states left out and counted, the bounds', async () => {
    const { batches, onBatch } = collect()
    const file = await openE57(memorySource(written.bytes))
    const summary: ReadSummary = await file.readAll({ onBatch })
    expect(summary.pointCount).toBe(expected.length)
    expect(summary.dropped).toEqual(dropped)
    expect(dropped.invalidState).toBeGreaterThan(0)
    expect(dropped.directionOnly).toBeGreaterThan(0)
    const got = points(batches)
    expected.forEach((e, k) => close(got[k]!.p, e.world, 1e-9 * Math.max(1, Math.hypot(...e.world)), `point ${k}`))
    for (let axis = 0; axis < 3; axis++) {
      expect(summary.bounds.min[axis]).toBe(Math.min(...expected.map((e) => e.world[axis]!)))
      expect(summary.bounds.max[axis]).toBe(Math.max(...expected.map((e) => e.world[axis]!)))
    }
  })

  it('through the push interface (readAll in memory), in chunks, the same points', async () => {
    const cloud = await readAll(written.bytes, 'e57', { chunkSize: 1000 })
    expect(cloud.count).toBe(expected.length)
    expect(cloud.header.format).toBe('e57')
    expect(cloud.colors).toBeDefined()
  })
})

describe('ColouredCubeFloat.e57, written by libE57Format', () => {
  const dir = fileURLToPath(new URL('../../../../shared/realdata/', import.meta.url))
  const file = `${dir}ColouredCubeFloat.e57`
  const present = existsSync(file)
  it.skipIf(!present)(`7680 points, coordinates in [-0.5, 0.5], colour 0-255${present ? '' : ' (skipped: ../shared/realdata is absent from this checkout)'}`, async () => {
    const bytes = readFileSync(file)
    const e57 = await openE57(memorySource(bytes))
    expect(e57.scans).toHaveLength(1)
    const { batches, onBatch } = collect()
    const summary = await e57.readAll({ onBatch })
    // 7680 points: libE57Format's test/src/test_SimpleReader.cpp, line 212 (asmaloney/libE57Format @
    // 21c2943a56d27e1a83b296c6f6dee2059e654c91), as ../shared/realdata/README.md records.
    expect(summary.pointCount).toBe(7680)
    // Coordinates in [-0.5, 0.5]: the prototype's declared minimum and maximum in the file's own XML
    // (and the README); a cube, so both ends are reached.
    expect(summary.bounds.min).toEqual([-0.5, -0.5, -0.5])
    expect(summary.bounds.max).toEqual([0.5, 0.5, 0.5])
    // Colour 0-255 (README; colorLimits 0..255 in the file): both ends occur among the points.
    let lo = 255
    let hi = 0
    for (const b of batches) for (const c of b.colors!) (lo = Math.min(lo, c)), (hi = Math.max(hi, c))
    expect([lo, hi]).toEqual([0, 255])
    expect(summary.header.hasIntensity).toBe(false)
  })
})

describe('malformed E57: each failure names its page, byte or XML path', () => {
  const small = (): E57FileSpec => sampleE57({ a: 300, b: 40, c: 30 }).spec

  it('a bad CRC names the page and the byte of its checksum', async () => {
    const { bytes } = writeE57(small())
    const damaged = bytes.slice()
    damaged[2 * 1024 + 100]! ^= 0x10
    const error = await failure(damaged)
    expect(error.message).toMatch(/^page 2 \(byte 3068\): CRC-32C checksum mismatch: stored 0x[0-9a-f]{8}, computed 0x[0-9a-f]{8}/)
    expect(error.byte).toBe(3068)
  })

  it('a damaged header page fails at page 0', async () => {
    const { bytes } = writeE57(small())
    const damaged = bytes.slice()
    damaged[20]! ^= 1
    expect((await failure(damaged, 'open')).message).toMatch(/^page 0 \(byte 1020\): CRC-32C checksum mismatch/)
  })

  it('a truncated page names the page and how much of it is there', async () => {
    const { bytes } = writeE57(small())
    const cut = bytes.subarray(0, bytes.length - 100)
    const last = Math.floor(cut.length / 1024)
    expect((await failure(cut, 'open')).message).toBe(
      `page ${last} (byte ${last * 1024}): the file ends inside this page: 924 of its 1024 bytes are there (truncated file)`,
    )
  })

  it('a file cut at a page boundary disagrees with its header length', async () => {
    const { bytes } = writeE57(small())
    expect((await failure(bytes.subarray(0, bytes.length - 1024), 'open')).message).toMatch(/^byte 16: the header gives a file length of \d+ bytes but the file has \d+ \(truncated\)/)
  })

  it('XML without a required element names its path', async () => {
    const spec = small()
    spec.xmlTransform = (xml) => xml.replace(/<prototype type="Structure">.*?<\/prototype>/, '')
    expect((await failure(writeE57(spec).bytes, 'open')).message).toBe('XML path /data3D/0/points/prototype: required element is missing')
    const noPoints = small()
    noPoints.xmlTransform = (xml) => xml.replace(/(<vectorChild type="Structure"><guid type="String"><!\[CDATA\[scan-1-guid\]\]><\/guid>[\s\S]*?)<points [\s\S]*?<\/points>/, '$1')
    expect((await failure(writeE57(noPoints).bytes, 'open')).message).toBe('XML path /data3D/1/points: required element is missing')
  })

  it('a prototype without coordinates, and a rotation that is not a unit quaternion, name their paths', async () => {
    const spec = small()
    spec.xmlTransform = (xml) => xml.replace('<cartesianZ type="Float" precision="single"/>', '<cartesianW type="Float" precision="single"/>')
    expect((await failure(writeE57(spec).bytes, 'open')).message).toMatch(/^XML path \/data3D\/2\/points\/prototype: has neither cartesianX\/Y\/Z nor sphericalRange/)
    const skew = small()
    skew.scans[0]!.rotation = [1, 1, 0, 0]
    expect((await failure(writeE57(skew).bytes, 'open')).message).toMatch(/^XML path \/data3D\/0\/pose\/rotation: the rotation quaternion .* is not of unit length/)
  })

  it('a vector shorter than its recordCount names the scan\'s points and how far it got', async () => {
    const spec = small()
    spec.scans[1]!.recordCountOverride = 45
    const written = writeE57(spec)
    expect((await failure(written.bytes)).message).toBe(
      `XML path /data3D/1/points: recordCount is 45, but the binary section (from byte ${written.sectionOffsets[1]}) ends after 40 records`,
    )
  })

  it('a codec other than bitpack is refused with its path', async () => {
    const spec = small()
    spec.scans[0]!.codecsXml = '<vectorChild type="Structure"><inputs type="Vector" allowHeterogeneousChildren="0"/><zipCodec type="Structure"/></vectorChild>'
    expect((await failure(writeE57(spec).bytes, 'open')).message).toBe("XML path /data3D/0/points/codecs/0: codec 'zipCodec' is not supported (Spanmark reads the bitpack codec)")
  })

  it('DTDs and entities are refused, and the XML section is capped in size', async () => {
    const spec = small()
    spec.xmlTransform = (xml) => xml.replace('<e57Root', '<!DOCTYPE e57Root [<!ENTITY big "aaaaaaaaaaaaaaaa">]>\n<e57Root')
    expect((await failure(writeE57(spec).bytes, 'open')).message).toMatch(/^XML path \/: the XML section holds a <!DOCTYPE declaration/)
    const written = writeE57(small())
    const size = new TextEncoder().encode(written.xml).length
    expect((await failure(written.bytes, 'open', { maxXmlBytes: 1000 })).message).toBe(`byte 32: the XML section is ${size} bytes, more than the 1000 Spanmark reads`)
  })

  it('an element without its type, or of a type the standard does not have, names its path', async () => {
    const untyped = small()
    untyped.xmlTransform = (xml) => xml.replace('<cartesianY type="Float" precision="single"/>', '<cartesianY precision="single"/>')
    expect((await failure(writeE57(untyped).bytes, 'open')).message).toBe("XML path /data3D/2/points/prototype/cartesianY: element has no 'type' attribute")
    const foreign = small()
    foreign.xmlTransform = (xml) => xml.replace('<intensityLimits type="Structure">', '<intensityLimits type="Record">')
    expect((await failure(writeE57(foreign).bytes, 'open')).message).toMatch(/^XML path \/data3D\/0\/intensityLimits: element type 'Record' is not one of ASTM E2807's/)
  })

  it('too many scans, and XML nested past any E57 structure, are refused', async () => {
    expect((await failure(writeE57(small()).bytes, 'open', { maxScans: 2 })).message).toBe('XML path /data3D: the file holds 3 scans, more than the 2 Spanmark takes from one file')
    const deep = small()
    const nest = '<a type="Structure">'.repeat(40) + '</a>'.repeat(40)
    deep.xmlTransform = (xml) => xml.replace('<images2D', `<deep type="Structure">${nest}</deep><images2D`)
    expect((await failure(writeE57(deep).bytes, 'open')).message).toMatch(/^XML path \/: the XML section is not well-formed XML \(.*/)
  })

  it('a data packet whose bytestream count differs from the prototype names the page and byte', async () => {
    const spec = small()
    const written = writeE57(spec)
    const bytes = written.bytes.slice()
    // The first data packet follows the 32-byte section header; its bytestreamCount is at +4.
    const at = written.sectionOffsets[0]! + 32 + 4
    bytes[at] = 3
    // Keep the page's checksum right, so the packet itself is what fails.
    const page = Math.floor(at / 1024)
    new DataView(bytes.buffer).setUint32(page * 1024 + 1020, crc32cReference(bytes.subarray(page * 1024, page * 1024 + 1020)), false)
    expect((await failure(bytes)).message).toBe(`page ${page} (byte ${at - 4}): a data packet of /data3D/0/points has 3 bytestreams, but its prototype has 10 fields`)
  })

  it('not an E57 at all, and an empty upload', async () => {
    expect((await failure(new Uint8Array(1024), 'open')).message).toMatch(/^page 0 \(byte 1020\): CRC-32C checksum mismatch|^byte 0: the file signature/)
    expect((await failure(new Uint8Array(0), 'open')).message).toBe('page 0 (byte 0): the file ends inside this page: 0 of its 1024 bytes are there (an E57 file is whole 1024-byte pages)')
  })
})
