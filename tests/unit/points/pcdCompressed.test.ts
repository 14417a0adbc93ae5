import { existsSync, readFileSync } from 'node:fs'
import { fileURLToPath } from 'node:url'
import { describe, expect, it } from 'vitest'
import { detectFormat, readAll, type PcdHeaderInfo } from '../../../server/points/readers/index'
import { lzfLiteral, writeCompressedPcd, type PcdColumn } from './lib/pcdCompressed'

/**
 * PCD 0.7 `DATA binary_compressed` (PCL's pcd_io.cpp layout, see lib/pcdCompressed.ts), field names in any
 * case, and organised clouds (HEIGHT > 1) whose pixels without a return hold NaN (PCL's convention for
 * is_dense false): those points are dropped and counted as `notANumber`.
 */

const REALDATA = fileURLToPath(new URL('../../../../shared/realdata/', import.meta.url))

/** An organised 9 x 4 cloud with every fifth pixel NaN; expected figures from the inputs, in float32. */
function organised() {
  const width = 9
  const height = 4
  const xs: number[] = []
  const ys: number[] = []
  const zs: number[] = []
  const rgb: number[] = []
  const intensity: number[] = []
  const kept: number[][] = []
  const keptColor: number[][] = []
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const i = r * width + c
      const hole = i % 5 === 3
      const p = hole ? [NaN, NaN, NaN] : [c * 0.1 - 0.37, r * -0.25 + 1.5, 2 + ((i * 7) % 11) * 0.01]
      xs.push(p[0]!), ys.push(p[1]!), zs.push(p[2]!)
      const color = [(i * 37) % 256, (i * 11) % 256, 255 - i]
      rgb.push((color[0]! << 16) | (color[1]! << 8) | color[2]!)
      intensity.push(i * 3)
      if (!hole) kept.push(p.map(Math.fround)), keptColor.push(color)
    }
  }
  const min = [0, 1, 2].map((a) => Math.min(...kept.map((p) => p[a]!)))
  const max = [0, 1, 2].map((a) => Math.max(...kept.map((p) => p[a]!)))
  const columns: PcdColumn[] = [
    { name: 'X', type: 'F', size: 4, values: xs },
    { name: 'Y', type: 'F', size: 4, values: ys },
    { name: 'Z', type: 'F', size: 4, values: zs },
    { name: 'RGB', type: 'U', size: 4, values: rgb },
    { name: 'Intensity', type: 'U', size: 2, values: intensity },
  ]
  return { width, height, columns, kept, keptColor, min, max, holes: width * height - kept.length }
}

describe('PCD binary_compressed, field case, organised clouds', () => {
  for (const lzf of ['package', 'literal'] as const) {
    it(`binary_compressed (${lzf === 'package' ? "lzfjs's compressor" : 'literal runs written here'}), X Y Z in capitals, organised 9 x 4 with NaN holes dropped and counted`, async () => {
      const o = organised()
      const bytes = writeCompressedPcd({ width: o.width, height: o.height, columns: o.columns, lzf })
      expect(detectFormat(bytes, 'organised.pcd')).toBe('pcd')
      const cloud = await readAll(bytes, 'pcd', { chunkSize: 13 })
      expect((cloud.header as PcdHeaderInfo).data).toBe('binary_compressed')
      expect(cloud.count).toBe(o.kept.length)
      expect(cloud.summary.dropped).toEqual({ notANumber: o.holes })
      expect(Array.from(cloud.positions)).toEqual(o.kept.flat())
      expect(Array.from(cloud.colors!)).toEqual(o.keptColor.flat())
      expect(cloud.summary.bounds).toEqual({ min: o.min, max: o.max })
    })
  }

  it("padding fields named '_' are left out of the block, as PCL writes them", async () => {
    const columns: PcdColumn[] = [
      { name: 'x', type: 'F', size: 4, values: [1, 2, 3] },
      { name: '_', type: 'U', size: 4, values: [] },
      { name: 'y', type: 'F', size: 8, values: [-1, -2, -3.5] },
      { name: 'z', type: 'I', size: 2, values: [7, -8, 9] },
    ]
    const cloud = await readAll(writeCompressedPcd({ width: 3, height: 1, columns }), 'pcd')
    expect(Array.from(cloud.positions)).toEqual([1, -1, 7, 2, -2, -8, 3, -3.5, 9])
  })

  it('binary (uncompressed) and ascii organised clouds drop NaN points too; x y z in mixed case', async () => {
    const ascii = [
      'VERSION 0.7', 'FIELDS x Y z', 'SIZE 4 4 4', 'TYPE F F F', 'COUNT 1 1 1', 'WIDTH 2', 'HEIGHT 2', 'POINTS 4', 'DATA ascii',
      '1 2 3', 'nan nan nan', '4 5 6', 'NaN NaN NaN', '',
    ].join('\n')
    const a = await readAll(new TextEncoder().encode(ascii), 'pcd')
    expect(Array.from(a.positions)).toEqual([1, 2, 3, 4, 5, 6])
    expect(a.summary.dropped).toEqual({ notANumber: 2 })
    const head = new TextEncoder().encode('VERSION 0.7\nFIELDS X Y Z\nSIZE 4 4 4\nTYPE F F F\nCOUNT 1 1 1\nWIDTH 3\nHEIGHT 2\nPOINTS 6\nDATA binary\n')
    const body = new Float32Array([NaN, NaN, NaN, 1, 2, 3, 4, 5, 6, NaN, NaN, NaN, NaN, NaN, NaN, -1, -2, -3])
    const bytes = new Uint8Array(head.length + body.byteLength)
    bytes.set(head)
    bytes.set(new Uint8Array(body.buffer), head.length)
    const b = await readAll(bytes, 'pcd', { chunkSize: 5 })
    expect(Array.from(b.positions)).toEqual([1, 2, 3, 4, 5, 6, -1, -2, -3])
    expect(b.summary.dropped).toEqual({ notANumber: 3 })
    expect(b.summary.bounds).toEqual({ min: [-1, -2, -3], max: [4, 5, 6] })
  })

  it('declared sizes are checked against the points, the file and the unpack limit before allocating; bad LZF names its byte', async () => {
    const columns: PcdColumn[] = ['x', 'y', 'z'].map((name, a) => ({ name, type: 'F', size: 4, values: [a, a + 1, a + 2, a + 3] }))
    const base = { width: 4, height: 1, columns }
    const bodyStart = new TextDecoder().decode(writeCompressedPcd(base)).indexOf('DATA binary_compressed\n') + 23
    await expect(readAll(writeCompressedPcd({ ...base, unpackedSize: 40 }), 'pcd')).rejects.toThrow(
      `byte ${bodyStart + 4}: the compressed block declares 40 unpacked bytes, but POINTS 4 of 12 bytes need 48`,
    )
    await expect(readAll(writeCompressedPcd({ ...base, packedSize: 4_000_000 }), 'pcd')).rejects.toThrow(
      `byte ${bodyStart}: the compressed block declares 4000000 bytes, more than LZF can take for 48 unpacked bytes`,
    )
    await expect(readAll(writeCompressedPcd({ ...base, packedSize: 60 }), 'pcd')).rejects.toThrow(
      `byte ${bodyStart}: the compressed block declares 60 bytes, but the file holds`,
    )
    await expect(readAll(writeCompressedPcd(base), 'pcd', { maxPcdUnpackedBytes: 47 })).rejects.toThrow(
      `byte ${bodyStart + 4}: the compressed block unpacks to 48 bytes, more than the 47 this reader unpacks in memory`,
    )
    // A back reference (control 0x20: length 1 + 2, distance from the next byte + 1) before any output.
    const bad = new Uint8Array([0x20, 0x05, ...lzfLiteral(new Uint8Array(45))])
    await expect(readAll(writeCompressedPcd({ ...base, block: bad }), 'pcd')).rejects.toThrow(
      `byte ${bodyStart + 8}: the compressed block is not valid LZF (a back reference reaches 6 bytes back, before the block's start)`,
    )
    const short = lzfLiteral(new Uint8Array(40))
    await expect(readAll(writeCompressedPcd({ ...base, block: short }), 'pcd')).rejects.toThrow(
      `byte ${bodyStart + 8}: the compressed block unpacks to 40 bytes, not the 48 it declares`,
    )
    const cut = writeCompressedPcd(base)
    await expect(readAll(cut.subarray(0, cut.length - 3), 'pcd', { byteLength: cut.length })).rejects.toThrow(
      'file ends inside the compressed block',
    )
  })

  // /work/shared/realdata/README.md: milk.pcd from PCL's test data (PointCloudLibrary/pcl @ 1fdb0388, test/milk.pcd),
  // 13704 points (its header's WIDTH and POINTS), bounds decoded independently of this project.
  const milk = `${REALDATA}milk.pcd`
  it.skipIf(!existsSync(milk))('milk.pcd (PCL test data): 13704 points and the README bounds', async () => {
    const bytes = new Uint8Array(readFileSync(milk))
    expect(detectFormat(bytes, 'milk.pcd')).toBe('pcd')
    const cloud = await readAll(bytes, 'pcd', { chunkSize: 4096 })
    expect(cloud.count).toBe(13704)
    const { min, max } = cloud.summary.bounds
    const want = { min: [-0.140083, -0.26378, 0.714], max: [0.013807, -0.011729, 0.891] }
    for (let a = 0; a < 3; a++) {
      expect(min[a]).toBeCloseTo(want.min[a]!, 6)
      expect(max[a]).toBeCloseTo(want.max[a]!, 6)
    }
  })
  if (!existsSync(milk)) it.skip(`milk.pcd: skipped, ${milk} is absent (the real-data folder sits beside the checkout only in CI)`, () => {})
})
