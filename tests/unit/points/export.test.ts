// The export writers (server/points/writers: LAS 1.4, E57, PLY) read back by the project's readers and by
// outside parsers: @loaders.gl/las 4.4.5 (LAZRsLoader, which reads LAS 1.4) and three's PLYLoader.
import { parse } from '@loaders.gl/core'
import { LAZRsLoader } from '@loaders.gl/las'
import { Matrix4, Vector3 } from 'three'
import { PLYLoader } from 'three/examples/jsm/loaders/PLYLoader.js'
import { describe, expect, it } from 'vitest'
import { memorySource } from '../../../server/points/readers/byteSource'
import { openE57 } from '../../../server/points/readers/e57Reader'
import { readAll, type LasHeaderInfo } from '../../../server/points/readers/index'
import { initLazRsWasm } from '../../../server/points/readers/lazDecoder'
import { E57Writer, physicalOffset, poseOf, type E57Plan } from '../../../server/points/writers/e57Writer'
import { LasWriter, lasScaleOffset, type LasPlan } from '../../../server/points/writers/lasWriter'
import { PlyStreamWriter, plyUsesDouble } from '../../../server/points/writers/plyWriter'
import { ExportError, MemorySink, type ExportBatch } from '../../../server/points/writers/sink'
import { crc32cReference } from './lib/e57Writer'

type Cloud = { count: number; positions: Float64Array; colors: Uint8Array; intensities: Float32Array }

/** A made-up cloud: a slanted patch of a wall near `at`, with colours and integer intensities. */
function cloud(n: number, at: [number, number, number], seed = 1): Cloud {
  const positions = new Float64Array(n * 3)
  const colors = new Uint8Array(n * 3)
  const intensities = new Float32Array(n)
  let s = seed
  const rand = () => ((s = (s * 1103515245 + 12345) % 2147483648) / 2147483648)
  for (let i = 0; i < n; i++) {
    positions[i * 3] = at[0] + rand() * 7.3
    positions[i * 3 + 1] = at[1] + rand() * 0.41 + Math.sin(i) * 1e-5
    positions[i * 3 + 2] = at[2] + rand() * 3.1
    for (let c = 0; c < 3; c++) colors[i * 3 + c] = Math.floor(rand() * 256)
    intensities[i] = Math.floor(rand() * 4000)
  }
  return { count: n, positions, colors, intensities }
}

function bounds(b: ExportBatch) {
  const min: [number, number, number] = [Infinity, Infinity, Infinity]
  const max: [number, number, number] = [-Infinity, -Infinity, -Infinity]
  for (let i = 0; i < b.count; i++) {
    for (let a = 0; a < 3; a++) {
      min[a] = Math.min(min[a]!, b.positions[i * 3 + a]!)
      max[a] = Math.max(max[a]!, b.positions[i * 3 + a]!)
    }
  }
  return { min, max }
}

/** Splits a cloud into batches of `size` (as tiles arrive). */
function* batches(b: Cloud, size: number): Generator<ExportBatch> {
  for (let s = 0; s < b.count; s += size) {
    const e = Math.min(b.count, s + size)
    yield { count: e - s, positions: b.positions.subarray(s * 3, e * 3), colors: b.colors.subarray(s * 3, e * 3), intensities: b.intensities.subarray(s, e) }
  }
}

async function lasOf(points: Cloud, colors = true) {
  const plan: LasPlan = { count: points.count, ...bounds(points), colors, intensities: true, created: new Date('2026-03-14T00:00:00Z') }
  const sink = new MemorySink()
  const writer = new LasWriter(sink, plan)
  await writer.begin()
  for (const b of batches(points, 1000)) await writer.write(b)
  await writer.end()
  return { bytes: sink.bytes(), plan, ...writer.scaleAndOffset }
}

describe('LAS 1.4 export (ASPRS LAS 1.4 R15)', () => {
  const points = cloud(20_000, [512_300.25, 4_310_900.5, 212.75])

  it('format 7 with colour: header fields, and every point within half the scale of where it was', async () => {
    const { bytes, scale, offset } = await lasOf(points)
    expect(scale).toEqual([0.0001, 0.0001, 0.0001])
    const { min, max } = bounds(points)
    offset.forEach((o, a) => expect(o).toBe((min[a]! + max[a]!) / 2))
    const ours = await readAll(bytes, 'las')
    const h = ours.header as LasHeaderInfo
    expect(h.version).toBe('1.4')
    expect(h.headerSize).toBe(375)
    expect(h.offsetToPoints).toBe(375)
    expect(h.pointFormat).toBe(7)
    expect(h.recordLength).toBe(36)
    expect(h.pointCount).toBe(points.count)
    // R15 Table 3: formats 6-10 keep the legacy counts at 0; the 64-bit counts by return carry them.
    expect(h.legacyPointCount).toBe(0)
    expect(h.pointsByReturn[0]).toBe(points.count)
    expect(h.pointsByReturn.slice(1).every((c) => c === 0)).toBe(true)
    expect(bytes.length).toBe(375 + 36 * points.count)
    // Global encoding (bytes 6-7): no WKT VLR is written, so the WKT bit (4) stays clear.
    expect(h.globalEncoding & 0x10).toBe(0)
    expect([h.creationDayOfYear, h.creationYear]).toEqual([73, 2026])
    expect(ours.count).toBe(points.count)
    let worst = 0
    for (let i = 0; i < points.count * 3; i++) worst = Math.max(worst, Math.abs(ours.positions[i]! - points.positions[i]!))
    expect(worst).toBeLessThanOrEqual(0.0001 / 2 + 1e-9)
    expect(worst).toBeGreaterThan(0) // the scale does round
    expect(Array.from(ours.colors!)).toEqual(Array.from(points.colors))
    expect(Array.from(ours.intensities!)).toEqual(Array.from(points.intensities))
    // Header bounds are those of the stored coordinates.
    for (let a = 0; a < 3; a++) {
      expect(Math.abs(h.min[a]! - min[a]!)).toBeLessThanOrEqual(0.0001 / 2 + 1e-9)
      expect(Math.abs(h.max[a]! - max[a]!)).toBeLessThanOrEqual(0.0001 / 2 + 1e-9)
    }
  })

  it('stretches intensities that are not whole 16-bit numbers onto 0-65535 (R15: intensity normalised to 16 bits)', async () => {
    const points = cloud(100, [0, 0, 0], 9)
    points.intensities.forEach((_, i) => (points.intensities[i] = i / 99)) // 0..1, as a PLY float intensity
    const sink = new MemorySink()
    const writer = new LasWriter(sink, { count: 100, ...bounds(points), colors: false, intensities: true, intensityRange: [0, 1] })
    await writer.begin()
    await writer.write(points)
    await writer.end()
    const ours = await readAll(sink.bytes(), 'las')
    expect(ours.intensities![0]).toBe(0)
    expect(ours.intensities![99]).toBe(65535)
    expect(ours.intensities![50]).toBe(Math.round((50 / 99) * 65535))
  })

  it('format 6 without colour', async () => {
    const { bytes } = await lasOf(cloud(300, [1, 2, 3]), false)
    const ours = await readAll(bytes, 'las')
    expect((ours.header as LasHeaderInfo).pointFormat).toBe(6)
    expect((ours.header as LasHeaderInfo).recordLength).toBe(30)
    expect(ours.colors).toBeUndefined()
  })

  it('reads the same in @loaders.gl/las 4.4.5 (LAZRsLoader, an outside LAS 1.4 reader)', async () => {
    const small = cloud(500, [-75.5, 18.25, -3.5], 7)
    const { bytes } = await lasOf(small)
    await initLazRsWasm()
    const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer
    const mesh = (await parse(buffer, LAZRsLoader, { worker: false, las: { fp64: true, colorDepth: 16 } })) as unknown as { header: { vertexCount: number }; attributes: Record<string, { value: ArrayLike<number> }> }
    expect(mesh.header.vertexCount).toBe(500)
    const pos = mesh.attributes.POSITION!.value
    for (let i = 0; i < 1500; i++) expect(Math.abs(pos[i]! - small.positions[i]!)).toBeLessThanOrEqual(0.0001 / 2 + 1e-9)
    // colorDepth 16: loaders.gl divides by 256, giving back the 8-bit colour (c x 257 / 256, floored).
    const colours = mesh.attributes.COLOR_0!.value
    for (let i = 0; i < 500; i++) for (let c = 0; c < 3; c++) expect(colours[i * 4 + c]).toBe(small.colors[i * 3 + c])
    const intensity = mesh.attributes.intensity!.value
    for (let i = 0; i < 500; i++) expect(intensity[i]).toBe(small.intensities[i])
  })

  it('chooses 1 mm where 0.1 mm would leave int32, and refuses a spread no millimetre scale holds, naming the axis', () => {
    // 2^31 - 1 steps of 0.1 mm reach 214.7 km either side of the centre; of 1 mm, 2147 km.
    expect(lasScaleOffset([0, 0, 0], [500_000, 10, 10]).scale).toEqual([0.001, 0.0001, 0.0001])
    expect(lasScaleOffset([0, 0, 0], [429_000, 10, 10]).scale[0]).toBe(0.0001)
    expect(lasScaleOffset([-2_000_000, 0, 0], [2_000_000, 10, 10]).scale[0]).toBe(0.001)
    expect(() => lasScaleOffset([0, -1, 0], [10, 5_000_000, 1])).toThrow(ExportError)
    expect(() => lasScaleOffset([0, -1, 0], [10, 5_000_000, 1])).toThrow(/spread 5000\.0 km along y .*32-bit integers/)
  })
})

describe('PLY export (binary little-endian)', () => {
  it('float coordinates below 1024 m: ours and three PLYLoader read them within float32 rounding', async () => {
    const points = cloud(3000, [12.5, -40.25, 1.5], 3)
    const plan = { count: points.count, maxAbs: 60, colors: true, intensities: true }
    expect(plyUsesDouble(plan)).toBe(false)
    const sink = new MemorySink()
    const writer = new PlyStreamWriter(sink, plan)
    await writer.begin()
    for (const b of batches(points, 777)) await writer.write(b)
    await writer.end()
    const bytes = sink.bytes()
    const ours = await readAll(bytes, 'ply')
    expect(ours.count).toBe(3000)
    for (let i = 0; i < 9000; i++) expect(ours.positions[i]).toBe(Math.fround(points.positions[i]!))
    expect(Array.from(ours.colors!)).toEqual(Array.from(points.colors))
    expect(Array.from(ours.intensities!)).toEqual(Array.from(points.intensities))
    // three's PLYLoader (three 0.187), an outside parser: positions as float32.
    const geometry = new PLYLoader().parse(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer)
    const pos = geometry.getAttribute('position')
    expect(pos.count).toBe(3000)
    for (let i = 0; i < 3000; i++) expect([pos.getX(i), pos.getY(i), pos.getZ(i)]).toEqual([0, 1, 2].map((a) => Math.fround(points.positions[i * 3 + a]!)))
    expect(geometry.getAttribute('color').count).toBe(3000)
  })

  it('double coordinates when they are large: exact', async () => {
    const points = cloud(500, [512_300.25, 4_310_900.5, 212.75], 5)
    const plan = { count: points.count, maxAbs: 4_310_901, colors: false, intensities: false }
    expect(plyUsesDouble(plan)).toBe(true)
    const sink = new MemorySink()
    const writer = new PlyStreamWriter(sink, plan)
    await writer.begin()
    await writer.write(points)
    await writer.end()
    const bytes = sink.bytes()
    expect(new TextDecoder().decode(bytes.subarray(0, 200))).toContain('property double x')
    const ours = await readAll(bytes, 'ply')
    expect(Array.from(ours.positions)).toEqual(Array.from(points.positions))
    const pos = new PLYLoader().parse(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer).getAttribute('position')
    // PLYLoader keeps its own precision here; it agrees within float32's step at 4e6 m (0.25 m) or better.
    for (let i = 0; i < 500; i++) expect(Math.abs(pos.getY(i) - points.positions[i * 3 + 1]!)).toBeLessThanOrEqual(0.25)
  })
})

describe('E57 export (ASTM E2807)', () => {
  // Two placements: scan frames with poses kept, not applied. 2048 records a packet: 5000 points make 3.
  const a = cloud(5000, [1.5, -2.25, 0.5], 11)
  const b = cloud(2048, [-3.5, 4, 1], 12)
  const poseA = new Matrix4().makeRotationZ(0.7).setPosition(10.5, -3.25, 0.125).elements
  const poseB = new Matrix4().makeRotationAxis(new Vector3(1, 2, 3).normalize(), -2.1).setPosition(-100.5, 7, 2).elements

  async function write(plan: E57Plan, clouds: Cloud[]) {
    const sink = new MemorySink()
    const writer = new E57Writer(sink, plan)
    await writer.begin()
    for (let i = 0; i < clouds.length; i++) {
      await writer.startScan(i)
      for (const batch of batches(clouds[i]!, 999)) await writer.write(batch)
    }
    await writer.end()
    return { bytes: sink.bytes(), length: writer.physicalLength }
  }

  const range = (c: Cloud) => [Math.min(...c.intensities), Math.max(...c.intensities)] as const
  const plan: E57Plan = {
    colors: true,
    intensities: true,
    scans: [
      { name: 'east bay', count: a.count, pose: poseA, ...bounds(a), intensityMin: range(a)[0], intensityMax: range(a)[1] },
      { name: 'loft ]]> stair', count: b.count, pose: poseB, ...bounds(b), intensityMin: range(b)[0], intensityMax: range(b)[1] },
      { name: 'empty', count: 0, pose: new Matrix4().elements, min: [0, 0, 0], max: [0, 0, 0] },
    ],
  }

  it('pages carry the CRC-32C of RFC 3720 B.4, and the header gives the file length', async () => {
    const { bytes, length } = await write(plan, [a, b, cloud(0, [0, 0, 0])])
    expect(bytes.length).toBe(length)
    expect(bytes.length % 1024).toBe(0)
    expect(new TextDecoder().decode(bytes.subarray(0, 8))).toBe('ASTM-E57')
    const view = new DataView(bytes.buffer, bytes.byteOffset)
    expect(Number(view.getBigUint64(16, true))).toBe(bytes.length)
    for (let p = 0; p < bytes.length / 1024; p++) {
      expect(view.getUint32(p * 1024 + 1020, false)).toBe(crc32cReference(bytes.subarray(p * 1024, p * 1024 + 1020)))
    }
    expect(physicalOffset(1020)).toBe(1024)
  })

  it('reads back scan by scan: coordinates exact in each scan frame, poses kept, colour exact, intensity by its limits', async () => {
    const { bytes } = await write(plan, [a, b, cloud(0, [0, 0, 0])])
    const file = await openE57(memorySource(bytes))
    expect(file.header.scans.map((s) => [s.name, s.recordCount, s.hasColor, s.hasIntensity])).toEqual([
      ['east bay', 5000, true, true],
      ['loft ]]> stair', 2048, true, true],
      ['empty', 0, true, true],
    ])
    for (const [i, c, m] of [[0, a, poseA], [1, b, poseB]] as const) {
      const pose = file.header.scans[i]!.pose
      // The reader normalises the quaternion: equal to the last bits.
      pose.rotation.forEach((q, k) => expect(q).toBeCloseTo(poseOf(m).rotation[k]!, 15))
      expect(pose.translation).toEqual([m[12], m[13], m[14]])
      const got: number[] = []
      const colours: number[] = []
      const intensities: number[] = []
      await file.readScan(i, { applyPose: false, onBatch: (batch) => { got.push(...batch.positions); colours.push(...batch.colors!); intensities.push(...batch.intensities!) } })
      expect(got).toEqual(Array.from(c.positions))
      expect(colours).toEqual(Array.from(c.colors))
      // The reader scales intensity from intensityLimits to 0-65535.
      const [lo, hi] = range(c)
      intensities.forEach((v, k) => expect(v).toBeCloseTo(((c.intensities[k]! - lo) / (hi - lo)) * 65535, 2))
    }
  })

  it('with the poses applied, the points land where the placements put them', async () => {
    const { bytes } = await write(plan, [a, b, cloud(0, [0, 0, 0])])
    const all = await readAll(bytes, 'e57')
    expect(all.count).toBe(7048)
    const m = new Matrix4().fromArray(poseB)
    const k = 5000 + 17
    const expected = new Vector3(b.positions[17 * 3]!, b.positions[17 * 3 + 1]!, b.positions[17 * 3 + 2]!).applyMatrix4(m)
    expect(all.positions[k * 3]).toBeCloseTo(expected.x, 9)
    expect(all.positions[k * 3 + 1]).toBeCloseTo(expected.y, 9)
    expect(all.positions[k * 3 + 2]).toBeCloseTo(expected.z, 9)
  })
})
