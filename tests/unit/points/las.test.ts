import { parse } from '@loaders.gl/core'
import { LASLoader, LAZRsLoader } from '@loaders.gl/las'
import { describe, expect, it } from 'vitest'
import { readAll, type LasHeaderInfo } from '../../../server/points/readers/index'
import { initLazRsWasm } from '../../../server/points/readers/lazDecoder'
import { CORE_SIZE, buildLas, samplePoints, type LasBuildOptions } from './lib/lasBuilder'
import { fixture } from './lib/readHelpers'

/**
 * LAS files built byte by byte from the ASPRS LAS 1.4 R15 tables (lib/lasBuilder.ts) read back with their
 * header fields, and compared with @loaders.gl/las 4.4.5 on the same bytes.
 * loaders.gl's limits: LASLoader (laz-perf) reads LAS up to 1.3, formats 0-3; LAZRsLoader also reads 1.4
 * (wasm initialised by hand). With `fp64: true` both compute X * scale + offset in doubles, and with
 * `colorDepth: 16` they divide 16-bit colour by 256 (our high byte).
 */

type Mesh = {
  header: { vertexCount: number }
  attributes: Record<string, { value: ArrayLike<number> } | undefined>
}

/** laz-perf's emscripten glue adds process handlers on first use: take them off again after each parse. */
async function withLoadersGl(bytes: Uint8Array, rs: boolean): Promise<Mesh> {
  const before = {
    uncaught: process.listeners('uncaughtException'),
    rejection: process.listeners('unhandledRejection'),
  }
  try {
    if (rs) await initLazRsWasm()
    const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer
    const options = { worker: false, las: { fp64: true, colorDepth: 16 } }
    return (await parse(buffer, rs ? LAZRsLoader : LASLoader, options)) as unknown as Mesh
  } finally {
    for (const l of process.listeners('uncaughtException')) if (!before.uncaught.includes(l)) process.off('uncaughtException', l)
    for (const l of process.listeners('unhandledRejection')) if (!before.rejection.includes(l)) process.off('unhandledRejection', l)
  }
}

function expectHeader(header: LasHeaderInfo, options: LasBuildOptions, bytes: Uint8Array) {
  const n = options.points.length
  const headerSize = options.minor === 4 ? 375 : options.minor === 3 ? 235 : 227
  expect(header.version).toBe(`1.${options.minor}`)
  expect(header.headerSize).toBe(headerSize)
  expect(header.pointFormat).toBe(options.pointFormat)
  expect(header.recordLength).toBe((CORE_SIZE[options.pointFormat] as number) + (options.extraBytes ?? 0))
  expect(header.pointCount).toBe(n)
  // Formats 6-10 keep the legacy count at 0 (LAS 1.4 R15, Table 3 notes).
  expect(header.legacyPointCount).toBe(options.pointFormat >= 6 ? 0 : n)
  expect(header.scale).toEqual(options.scale)
  expect(header.offset).toEqual(options.offset)
  expect(header.vlrCount).toBe(options.vlrs?.length ?? 0)
  expect(header.offsetToPoints).toBe(bytes.length - n * header.recordLength)
  expect(header.systemIdentifier).toBe('TEST BUILDER')
  expect(header.generatingSoftware).toBe('spec-table builder')
  expect([header.creationDayOfYear, header.creationYear]).toEqual([123, 2024])
  const returns = [0, 0, 0]
  for (const p of options.points) returns[p.returnNumber - 1]!++
  expect(header.pointsByReturn.slice(0, 3)).toEqual(returns)
  for (let a = 0; a < 3; a++) {
    const key = (['X', 'Y', 'Z'] as const)[a]!
    const values = options.points.map((p) => p[key] * options.scale[a]! + options.offset[a]!)
    expect(header.min[a]).toBe(Math.min(...values))
    expect(header.max[a]).toBe(Math.max(...values))
  }
}

async function checkAgainstSpecAndLoadersGl(options: LasBuildOptions, rs: boolean) {
  const bytes = buildLas(options)
  const ours = await readAll(bytes, 'las', { chunkSize: 333 })
  expect(ours.header.format).toBe('las')
  expectHeader(ours.header as LasHeaderInfo, options, bytes)
  const n = options.points.length
  // The specification's formula, on the builder's integers: X = X_record * scale + offset.
  options.points.forEach((p, i) => {
    expect(ours.positions[i * 3]).toBe(p.X * options.scale[0] + options.offset[0])
    expect(ours.positions[i * 3 + 1]).toBe(p.Y * options.scale[1] + options.offset[1])
    expect(ours.positions[i * 3 + 2]).toBe(p.Z * options.scale[2] + options.offset[2])
    expect(ours.intensities![i]).toBe(p.intensity)
    if (p.rgb) for (let k = 0; k < 3; k++) expect(ours.colors![i * 3 + k]).toBe(p.rgb[k]! >> 8)
  })
  const theirs = await withLoadersGl(bytes, rs)
  expect(theirs.header.vertexCount).toBe(n)
  expect(Array.from(ours.positions)).toEqual(Array.from(theirs.attributes.POSITION!.value))
  expect(Array.from(ours.intensities!)).toEqual(Array.from(theirs.attributes.intensity!.value))
  const color = theirs.attributes.COLOR_0
  if (ours.colors) {
    const rgb = Array.from(color!.value).filter((_, i) => i % 4 !== 3)
    expect(Array.from(ours.colors)).toEqual(rgb)
  } else {
    expect(color).toBeUndefined()
  }
}

describe('LAS from the ASPRS tables', () => {
  const common = { scale: [0.01, 0.005, 0.001] as [number, number, number], offset: [431000.25, 5126000.5, 120] as [number, number, number] }

  for (const pointFormat of [0, 1, 2, 3] as const) {
    it(`LAS 1.2 format ${pointFormat}: header fields, scale and offset; same as loaders.gl LASLoader`, async () => {
      await checkAgainstSpecAndLoadersGl(
        { minor: 2, pointFormat, ...common, points: samplePoints(50, pointFormat >= 2), vlrs: [{ userId: 'LASF_Projection', recordId: 2112, payload: new TextEncoder().encode('LOCAL_CS["test"]') }] },
        false,
      )
    })
  }

  for (const pointFormat of [6, 7, 8] as const) {
    it(`LAS 1.4 format ${pointFormat}: 375-byte header, 64-bit counts; same as loaders.gl LAZRsLoader`, async () => {
      await checkAgainstSpecAndLoadersGl({ minor: 4, pointFormat, ...common, points: samplePoints(50, pointFormat >= 7), extraBytes: 4 }, true)
    })
  }

  // Waveform formats (LAS 1.4 R15 Tables 11, 12, 16, 17): 4 = 1 + 29 wave packet bytes = 57, 5 = 3 + 29 = 63,
  // 9 = 6 + 29 = 59, 10 = 8 + 29 = 67. The points are read, the wave packet fields skipped.
  for (const [pointFormat, minor, size] of [[4, 3, 57], [5, 3, 63], [9, 4, 59], [10, 4, 67]] as const) {
    it(`LAS 1.${minor} format ${pointFormat} (${size}-byte records with waveform packets): points read, waveform skipped`, async () => {
      const color = pointFormat === 5 || pointFormat === 10
      const options: LasBuildOptions = { minor, pointFormat, ...common, points: samplePoints(40, color), extraBytes: 3 }
      const bytes = buildLas(options)
      expect(bytes[105]! | (bytes[106]! << 8)).toBe(size + 3)
      const ours = await readAll(bytes, 'las', { chunkSize: 101 })
      expectHeader(ours.header as LasHeaderInfo, options, bytes)
      expect(ours.count).toBe(40)
      options.points.forEach((p, i) => {
        expect(ours.positions[i * 3]).toBe(p.X * options.scale[0] + options.offset[0])
        expect(ours.positions[i * 3 + 1]).toBe(p.Y * options.scale[1] + options.offset[1])
        expect(ours.positions[i * 3 + 2]).toBe(p.Z * options.scale[2] + options.offset[2])
        expect(ours.intensities![i]).toBe(p.intensity)
        if (p.rgb) for (let k = 0; k < 3; k++) expect(ours.colors![i * 3 + k]).toBe(p.rgb[k]! >> 8)
      })
      expect(ours.colors !== undefined).toBe(color)
      // Bounds from the builder's integers, not from the reader.
      for (let a = 0; a < 3; a++) {
        const key = (['X', 'Y', 'Z'] as const)[a]!
        const values = options.points.map((p) => p[key] * options.scale[a]! + options.offset[a]!)
        expect(ours.summary.bounds.min[a]).toBe(Math.min(...values))
        expect(ours.summary.bounds.max[a]).toBe(Math.max(...values))
      }
    })
  }

  it('a waveform format in a LAS 1.2 file is refused, naming the field', async () => {
    const bytes = buildLas({ minor: 2, pointFormat: 4, ...common, points: samplePoints(3, false) })
    await expect(readAll(bytes, 'las')).rejects.toThrow(/point data format.*point format 4 needs LAS 1.3/)
  })

  it('LAS 1.3 header (235 bytes) reads too', async () => {
    const options: LasBuildOptions = { minor: 3, pointFormat: 1, ...common, points: samplePoints(5, false) }
    const bytes = buildLas(options)
    const ours = await readAll(bytes, 'las')
    expectHeader(ours.header as LasHeaderInfo, options, bytes)
  })

  it('large coordinates keep their millimetres (doubles, not float32)', async () => {
    const points = samplePoints(3, false).map((p, i) => ({ ...p, X: 123456789 + i, Y: 987654321 - i }))
    const options: LasBuildOptions = { minor: 2, pointFormat: 0, scale: [0.001, 0.001, 0.001], offset: [0, 0, 0], points }
    const ours = await readAll(buildLas(options), 'las')
    expect(ours.positions[0]).toBe(123456789 * 0.001)
    expect(ours.positions[4]).toBe(987654320 * 0.001)
  })
})

describe('crate fixtures (tests/fixtures)', () => {
  it('crate.las: LAS 1.2 format 0, 5220 points, the README bounds, scale and offset', async () => {
    const cloud = await readAll(fixture('crate.las'), 'las', { chunkSize: 1 << 12 })
    const header = cloud.header as LasHeaderInfo
    expect(cloud.count).toBe(5220)
    expect([header.version, header.pointFormat, header.recordLength]).toEqual(['1.2', 0, 20])
    expect(header.scale).toEqual([0.0001, 0.0001, 0.0001])
    // README: offset at the minimum corner (-0.4010, -0.2510, -0.0010), to 4 decimals.
    header.offset.forEach((o, a) => expect(o).toBeCloseTo([-0.401, -0.251, -0.001][a]!, 4))
    // README: min (-0.4010, -0.2510, -0.0010), max (0.4010, 0.2510, 0.6010), given to 4 decimals.
    const { min, max } = cloud.summary.bounds
    ;[-0.401, -0.251, -0.001].forEach((v, a) => expect(Math.abs(min[a]! - v)).toBeLessThan(0.5e-4))
    ;[0.401, 0.251, 0.601].forEach((v, a) => expect(Math.abs(max[a]! - v)).toBeLessThan(0.5e-4))
    // README: intensity 100-149.
    const intensities = Array.from(cloud.intensities!)
    expect(Math.min(...intensities)).toBe(100)
    expect(Math.max(...intensities)).toBe(149)
  })

  it('crate.laz through the LAZ path gives exactly the coordinates of crate.las', async () => {
    const las = await readAll(fixture('crate.las'), 'las')
    const laz = await readAll(fixture('crate.laz'), 'laz')
    expect(laz.count).toBe(5220)
    expect(laz.header.format).toBe('laz')
    expect(Array.from(laz.positions)).toEqual(Array.from(las.positions))
    expect(Array.from(laz.intensities!)).toEqual(Array.from(las.intensities!))
    expect(laz.summary.bounds).toEqual(las.summary.bounds)
  })

  it('crate.laz decodes a batch at a time (1000 points a batch) to the same points as crate.las', async () => {
    const las = await readAll(fixture('crate.las'), 'las')
    const { createReader } = await import('../../../server/points/readers/index')
    const sizes: number[] = []
    const positions: number[] = []
    const reader = createReader('laz', {
      batchSize: 1000,
      reuseBuffers: true,
      onBatch: (b) => {
        sizes.push(b.count)
        positions.push(...b.positions)
      },
    })
    reader.push(fixture('crate.laz'))
    const summary = await reader.end()
    expect(sizes).toEqual([1000, 1000, 1000, 1000, 1000, 220])
    expect(summary.pointCount).toBe(5220)
    expect(positions).toEqual(Array.from(las.positions))
  })

  it('a damaged LAZ fails with the decoder\'s own words, and the next LAZ still decodes', async () => {
    const damaged = new Uint8Array(fixture('crate.laz'))
    const { offsetToPoints } = (await readAll(fixture('crate.laz'), 'laz')).header as LasHeaderInfo
    for (let i = offsetToPoints + 60; i < offsetToPoints + 400; i++) damaged[i] = (i * 131) & 255
    await expect(readAll(damaged, 'laz')).rejects.toThrow(
      new RegExp(`^byte ${offsetToPoints}: the compressed points could not be decoded: the LAZ data is damaged \\(it stopped after \\d+ of 5220 points; the decoder said: `),
    )
    expect((await readAll(fixture('crate.laz'), 'laz')).count).toBe(5220)
  })

  it("a decoder panic (console.error, then a wasm trap) is reported in the panic's own words", async () => {
    const { withPanicText } = await import('../../../server/points/readers/lazDecoder')
    const trap = () => {
      console.error('panicked at /somewhere/src/laszip.rs:12:5:\nthe chunk table is missing')
      throw new WebAssembly.RuntimeError('unreachable')
    }
    expect(() => withPanicText(trap)).toThrow(/^the chunk table is missing$/)
    expect(() => withPanicText(() => { throw new Error('plain') })).toThrow(/^plain$/)
    expect(withPanicText(() => 7)).toBe(7)
  })

  it('LAZ above the size cap is refused with a message, before decoding', async () => {
    const bytes = fixture('crate.laz')
    await expect(readAll(bytes, 'laz', { maxLazBytes: 10_000 })).rejects.toThrow(
      /LAZ files are held whole in memory while decoded and this one is larger than the 10000-byte limit/,
    )
    await expect(readAll(bytes, 'laz', { maxLazPoints: 5000 })).rejects.toThrow(
      "header field 'number of point records': 5220 points, more than the 5000 a LAZ file may hold here",
    )
  })

  it('a LAS file named .laz, or a LAZ read as LAS, says which it is', async () => {
    await expect(readAll(fixture('crate.laz'), 'las')).rejects.toThrow(/points are LAZ-compressed: read the file as .laz/)
    await expect(readAll(fixture('crate.las'), 'laz')).rejects.toThrow(/not LAZ-compressed: read the file as .las/)
  })
})
