// The tile format of shared/points/tileFormat.ts. Precision reference: IEEE 754 binary32 keeps a 24-bit
// significand (published: IEEE 754-2008 table 3.5), and Math.fround is the round-to-nearest-even conversion
// to it (published: ECMAScript 2023, section 21.3.2.17); the round trip itself is common practice, no source.
import { describe, expect, it } from 'vitest'
import {
  TILE_HEADER_BYTES,
  TileFormatError,
  decodeTile,
  encodeTile,
  positionRoundingBound,
  tileByteLength,
  type DecodedTile,
} from '@shared/points/tileFormat'
import { PointBuffer } from '../../../server/points/pointBuffer'
import { encodeNodeTile } from '../../../server/points/octree/nodeTile'
import { createRandom } from './factories'

function sampleTile(count: number): DecodedTile {
  const random = createRandom(3)
  return {
    count,
    origin: [512_345.678, 5_123_456.789, 312.5],
    positions: Float32Array.from({ length: count * 3 }, () => random() * 100 - 50),
    colors: Uint8Array.from({ length: count * 3 }, (_, i) => (i * 37) & 255),
    intensities: Float32Array.from({ length: count }, (_, i) => i * 0.5),
    uncertainties: Float32Array.from({ length: count }, () => random() * 0.01),
  }
}

describe('tile format', () => {
  it('round-trips every attribute and lays the header out little-endian as documented', () => {
    const tile = sampleTile(258)
    const bytes = encodeTile(tile)
    expect(bytes.byteLength).toBe(40 + 258 * (12 + 4 + 4 + 3))
    expect(bytes.byteLength).toBe(tileByteLength(258, { colors: true, intensities: true, uncertainties: true }))
    expect(String.fromCharCode(...bytes.subarray(0, 4))).toBe('SMT1')
    expect(Array.from(bytes.subarray(4, 12))).toEqual([1, 0, 7, 0, 2, 1, 0, 0]) // version 1, flags 7, count 258
    const view = new DataView(bytes.buffer, bytes.byteOffset)
    expect(view.getFloat64(16, true)).toBe(512_345.678)
    expect(view.getFloat32(40, true)).toBe(tile.positions[0])
    // Intensities follow the positions, uncertainties the intensities, colours come last.
    expect(view.getFloat32(40 + 258 * 12 + 4, true)).toBe(0.5)
    expect(view.getFloat32(40 + 258 * 16, true)).toBe(tile.uncertainties![0])
    expect(bytes[40 + 258 * 20 + 1]).toBe(37)
    const back = decodeTile(bytes)
    expect(back.count).toBe(258)
    expect(back.origin).toEqual(tile.origin)
    expect(back.positions).toEqual(tile.positions)
    expect(back.colors).toEqual(tile.colors)
    expect(back.intensities).toEqual(tile.intensities)
    expect(back.uncertainties).toEqual(tile.uncertainties)
  })

  it('decodes without copying when aligned, and copies when not', () => {
    const bytes = encodeTile(sampleTile(10))
    const aligned = decodeTile(bytes)
    expect(aligned.positions.buffer).toBe(bytes.buffer)
    const shifted = new Uint8Array(bytes.byteLength + 1)
    shifted.set(bytes, 1)
    const unaligned = decodeTile(shifted.subarray(1))
    expect(unaligned.positions.buffer).not.toBe(shifted.buffer)
    expect(unaligned.positions).toEqual(aligned.positions)
    expect(unaligned.uncertainties).toEqual(aligned.uncertainties)
    // A Node Buffer at an odd offset inside a larger pool, as a database driver may hand it over.
    const pool = Buffer.alloc(bytes.byteLength + 3, 0xee)
    pool.set(bytes, 3)
    const fromPool = decodeTile(pool.subarray(3))
    expect(fromPool.positions).toEqual(aligned.positions)
    expect(fromPool.intensities).toEqual(aligned.intensities)
    expect(fromPool.colors).toEqual(aligned.colors)
  })

  it('encodes tiles without attributes and empty tiles', () => {
    const bare = encodeTile({ count: 2, origin: [1, 2, 3], positions: new Float32Array([0, 0, 0, 1, 1, 1]) })
    expect(bare.byteLength).toBe(TILE_HEADER_BYTES + 24)
    const back = decodeTile(bare)
    expect(back.colors).toBeUndefined()
    expect(back.intensities).toBeUndefined()
    expect(decodeTile(encodeTile({ count: 0, origin: [0, 0, 0], positions: new Float32Array(0) })).count).toBe(0)
  })

  it('rejects damaged tiles with a named error', () => {
    const bytes = encodeTile(sampleTile(5))
    const bad = (mutate: (copy: Uint8Array) => Uint8Array) => () => decodeTile(mutate(bytes.slice()))
    expect(bad((b) => { b[0] = 0x58; return b })).toThrow(TileFormatError)
    expect(bad((b) => { b[4] = 9; return b })).toThrow(/version 9/)
    expect(bad((b) => { b[6] = 0x18; return b })).toThrow(/unknown flags/)
    expect(bad((b) => b.subarray(0, b.length - 1))).toThrow(/bytes/)
    expect(bad((b) => b.subarray(0, 20))).toThrow(/header/)
    expect(() => encodeTile({ count: 3, origin: [0, 0, 0], positions: new Float32Array(6) })).toThrow(TileFormatError)
    expect(() => encodeTile({ count: 1, origin: [0, NaN, 0], positions: new Float32Array(3) })).toThrow(TileFormatError)
  })

  it('stores positions as Math.fround of the offset from the node centre, within the stated bound', () => {
    // A 100 m node far from the origin (projected coordinates): points spread to its corners.
    const random = createRandom(8)
    const min = [487_000, 5_411_000, 200]
    const count = 20_000
    const positions = new Float64Array(count * 3)
    for (let i = 0; i < count * 3; i++) positions[i] = min[i % 3]! + (i < 24 ? (i % 2) * 100 : random() * 100)
    const buffer = PointBuffer.fromArrays({ positions })
    const bounds = { min: [min[0]!, min[1]!, min[2]!] as [number, number, number], max: [min[0]! + 100, min[1]! + 100, min[2]! + 100] as [number, number, number] }
    const indices = Uint32Array.from({ length: count }, (_, i) => i)
    const tile = decodeTile(encodeNodeTile(buffer, { bounds, indices }))
    expect(tile.origin).toEqual([min[0]! + 50, min[1]! + 50, min[2]! + 50])
    // 100 m node: offsets up to 50 m, float32 ulp there 2^-18 m, rounding at most half of it: 2^-19 m = 1.9 um.
    const bound = positionRoundingBound(100)
    expect(bound).toBe(2 ** -19)
    let worst = 0
    for (let i = 0; i < count * 3; i++) {
      const offset = positions[i]! - tile.origin[i % 3]!
      expect(tile.positions[i]).toBe(Math.fround(offset))
      worst = Math.max(worst, Math.abs(tile.origin[i % 3]! + tile.positions[i]! - positions[i]!))
    }
    expect(worst).toBeLessThanOrEqual(bound)
    // The bound is tight: some point gets within a factor 2 of it.
    expect(worst).toBeGreaterThan(bound / 2)
  })
})
