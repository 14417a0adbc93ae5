// Stray points against their published definition (Rusu, Marton, Blodow, Dolha and Beetz 2008, Robotics and
// Autonomous Systems 56(11), section 4): the same means by a brute-force O(n^2) search give the same kept set.
import { describe, expect, it } from 'vitest'
import { strayPoints } from '@shared/measure/strayPoints'
import { mulberry32, normal, sampleStd } from './random'

/** The definition written plainly: every pair's distance, the k smallest others, mean, mean + n sample sd. */
function bruteForce(xyz: Float64Array, k: number, n: number) {
  const count = xyz.length / 3
  const means = new Float64Array(count)
  for (let i = 0; i < count; i++) {
    // The k smallest distances to the other points, kept in ascending order by plain insertion.
    const smallest: number[] = []
    for (let j = 0; j < count; j++) {
      if (j === i) continue
      const d = Math.sqrt((xyz[3 * j]! - xyz[3 * i]!) ** 2 + (xyz[3 * j + 1]! - xyz[3 * i + 1]!) ** 2 + (xyz[3 * j + 2]! - xyz[3 * i + 2]!) ** 2)
      if (smallest.length === k && d >= smallest[k - 1]!) continue
      let at = smallest.findIndex((e) => e > d)
      if (at < 0) at = smallest.length
      smallest.splice(at, 0, d)
      if (smallest.length > k) smallest.pop()
    }
    means[i] = smallest.reduce((x, y) => x + y, 0) / k
  }
  const mean = means.reduce((a, b) => a + b, 0) / count
  const sd = sampleStd(means)
  const threshold = mean + n * sd
  return { keep: Uint8Array.from(means, (m) => (m > threshold ? 0 : 1)), mean, sd, threshold }
}

/** A noisy wavy sheet with a few clumps and scattered points around it. */
function cloud(seed: number, count: number): Float64Array {
  const rand = mulberry32(seed)
  const gauss = normal(rand)
  const xyz = new Float64Array(3 * count)
  for (let i = 0; i < count; i++) {
    const x = rand(), y = rand()
    const scattered = rand() < 0.03
    xyz[3 * i] = x
    xyz[3 * i + 1] = y
    xyz[3 * i + 2] = scattered ? rand() * 0.5 - 0.25 : 0.05 * Math.sin(6 * x) + 0.002 * gauss()
  }
  // Exact duplicates: a duplicate is a neighbour at distance 0 (only the point itself is excluded).
  for (let i = 0; i < 20; i++) xyz.copyWithin(3 * (count - 1 - i), 3 * i, 3 * i + 3)
  return xyz
}

describe('stray points', () => {
  it('keeps the same points as a brute-force computation of the definition', () => {
    for (const [seed, k, n] of [[1, 8, 2], [2, 4, 1], [3, 16, 1.5]] as const) {
      const xyz = cloud(seed, 2500)
      const ours = strayPoints(xyz, k, n)
      const ref = bruteForce(xyz, k, n)
      expect(ours.mean).toBeCloseTo(ref.mean, 12)
      expect(ours.sd).toBeCloseTo(ref.sd, 12)
      expect(ours.threshold).toBeCloseTo(ref.threshold, 12)
      expect(Array.from(ours.keep)).toEqual(Array.from(ref.keep))
      expect(ours.dropped).toBe(ref.keep.length - ref.keep.reduce((a, b) => a + b, 0))
      expect(ours.dropped).toBeGreaterThan(0)
    }
  })

  it('drops exactly the far points planted off a plane', () => {
    const rand = mulberry32(7)
    const side = 50
    const planted = [[0.1, 0.2, 1.5], [0.45, 0.3, -2], [3, 3, 0.4], [-1.2, 0.25, 0.9], [0.25, -2.5, -0.7]]
    const xyz = new Float64Array(3 * (side * side + planted.length))
    for (let i = 0; i < side; i++) {
      for (let j = 0; j < side; j++) {
        const p = 3 * (i * side + j)
        xyz[p] = i * 0.01 + 0.001 * (rand() - 0.5)
        xyz[p + 1] = j * 0.01 + 0.001 * (rand() - 0.5)
        xyz[p + 2] = 0.001 * (rand() - 0.5)
      }
    }
    planted.forEach((q, t) => xyz.set(q, 3 * (side * side + t)))
    const res = strayPoints(xyz, 8, 2)
    const dropped = [...res.keep.keys()].filter((i) => res.keep[i] === 0)
    expect(dropped).toEqual(planted.map((_, t) => side * side + t))
    expect(res.dropped).toBe(planted.length)
  })

  it('keeps a point exactly at the threshold (strictly beyond is stray) and every point of a too-small cloud', () => {
    // Four points on a line at 0, 1, 2 and 3 (k = 1): means 1, 1, 1, 1 -> sd 0, threshold 1, nothing beyond.
    const line = new Float64Array([0, 0, 0, 1, 0, 0, 2, 0, 0, 3, 0, 0])
    expect(strayPoints(line, 1, 2)).toMatchObject({ dropped: 0, mean: 1, sd: 0, threshold: 1 })
    const few = strayPoints(new Float64Array([0, 0, 0, 1, 1, 1]), 8, 2)
    expect(few).toMatchObject({ dropped: 0, threshold: 0 })
    expect(Array.from(few.keep)).toEqual([1, 1])
  })

  it('names a bad argument', () => {
    expect(() => strayPoints(new Float64Array(4), 8, 2)).toThrow(/x y z triples: 4 numbers/)
    expect(() => strayPoints(new Float64Array(30), 0, 2)).toThrow(/k must be a whole number/)
    expect(() => strayPoints(new Float64Array(30), 2.5, 2)).toThrow(/k must be a whole number.*2.5/)
    expect(() => strayPoints(new Float64Array(30), 8, -1)).toThrow(/n must be a finite number/)
    expect(() => strayPoints(new Float64Array([0, 0, 0, Number.NaN, 0, 0]), 1, 2)).toThrow(/point 1 has a coordinate/)
  })
})
