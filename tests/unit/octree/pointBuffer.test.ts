// PointBuffer: batches in, the same columns out (common practice, no source: a store must return what it was given).
import { describe, expect, it } from 'vitest'
import { PointBuffer, type PointBatch } from '../../../server/points/pointBuffer'

function batch(start: number, count: number, withColor = true): PointBatch {
  const positions = new Float64Array(count * 3)
  const colors = new Uint8Array(count * 3)
  const intensities = new Float32Array(count)
  for (let i = 0; i < count; i++) {
    const n = start + i
    positions.set([n, n * 0.5, -n], i * 3)
    colors.set([n & 255, (n * 7) & 255, (n * 13) & 255], i * 3)
    intensities[i] = n * 2
  }
  return withColor ? { count, positions, colors, intensities } : { count, positions, intensities }
}

describe('PointBuffer', () => {
  it('appends batches of any size, growing geometrically, and keeps every value', () => {
    const buffer = new PointBuffer({ capacity: 0 })
    const sizes = [1, 1000, 65536, 3, 200_000, 17]
    let start = 0
    for (const size of sizes) {
      buffer.append(batch(start, size))
      start += size
      // Geometric growth below 4 Mi points is doubling: never more than twice what is needed.
      expect(buffer.capacity).toBeGreaterThanOrEqual(buffer.count)
      expect(buffer.capacity).toBeLessThanOrEqual(Math.max(2 * buffer.count, 1024))
    }
    expect(buffer.count).toBe(start)
    for (const i of [0, 1, 999, 1000, 66536, 266_556]) {
      expect(buffer.point(i)).toEqual([i, i * 0.5, -i])
      expect(Array.from(buffer.colors!.subarray(i * 3, i * 3 + 3))).toEqual([i & 255, (i * 7) & 255, (i * 13) & 255])
      expect(buffer.intensities![i]).toBe(i * 2)
    }
    expect(buffer.uncertainties).toBeNull()
  })

  it('trims to the exact count and keeps appending afterwards', () => {
    const buffer = new PointBuffer()
    buffer.append(batch(0, 5000))
    expect(buffer.capacity).toBeGreaterThan(5000)
    buffer.trim()
    expect(buffer.capacity).toBe(5000)
    expect(buffer.positions.length).toBe(15_000)
    expect(buffer.colors!.length).toBe(15_000)
    expect(buffer.byteLength).toBe(5000 * (24 + 3 + 4))
    buffer.append(batch(5000, 10))
    expect(buffer.point(5009)).toEqual([5009, 5009 * 0.5, -5009])
  })

  it('reserves exactly when the count is known up front', () => {
    const buffer = new PointBuffer({ capacity: 70_000, colors: true, intensities: true })
    buffer.append(batch(0, 65536))
    buffer.append(batch(65536, 4464))
    expect(buffer.capacity).toBe(70_000)
    expect(buffer.count).toBe(70_000)
  })

  it('a column first seen in a later batch reads 0 for the earlier points', () => {
    const buffer = new PointBuffer()
    buffer.append(batch(0, 10, false))
    buffer.append(batch(10, 10, true))
    expect(Array.from(buffer.colors!.subarray(0, 30)).every((v) => v === 0)).toBe(true)
    expect(buffer.colors![30]).toBe(10)
  })

  it('copies batches, so a reader may refill its arrays', () => {
    const buffer = new PointBuffer()
    const reused = batch(0, 4)
    buffer.append(reused)
    reused.positions.fill(99)
    expect(buffer.point(3)).toEqual([3, 1.5, -3])
  })

  it('wraps existing arrays without copying and rejects ragged ones', () => {
    const positions = new Float64Array([1, 2, 3, 4, 5, 6])
    const buffer = PointBuffer.fromArrays({ positions })
    expect(buffer.count).toBe(2)
    expect(buffer.positions).toBe(positions)
    expect(() => PointBuffer.fromArrays({ positions: new Float64Array(4) })).toThrow(RangeError)
    expect(() => PointBuffer.fromArrays({ positions, intensities: new Float32Array(3) })).toThrow(RangeError)
  })
})
