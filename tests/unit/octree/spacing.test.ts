// Mean point spacing (spacing about range x angular step, derived). Reference data: a synthetic 2 cm grid with +-1 mm noise
// (derived: the spacing is the grid step by construction) and the crate fixture (tests/fixtures/README via
// tests/fixtures: 2 cm grid, +-1 mm noise on five faces of a crate), read with the project's LAS reader.
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { LasReader } from '../../../server/points/readers/lasReader'
import { PointBuffer } from '../../../server/points/pointBuffer'
import { estimateSpacing } from '../../../server/points/stats/spacing'
import { computeScanStats } from '../../../server/points/stats/scanStats'
import { bufferBounds } from '../../../server/points/stats/bounds'
import { createRandom, sampleIndices } from '../../../server/points/stats/random'
import { mixedScene, noisyGrid } from './factories'

async function readCrate(): Promise<PointBuffer> {
  const bytes = readFileSync(new URL('../../fixtures/crate.las', import.meta.url))
  const buffer = new PointBuffer()
  const reader = new LasReader({ onBatch: (batch) => buffer.append(batch) })
  reader.push(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength))
  await reader.end()
  return buffer
}

/** The rank-th nearest other point by brute force, for the same seeded sample. */
function bruteSpacing(buffer: PointBuffer, sampleSize: number, seed: number, rank: number): number {
  const p = buffer.positions
  let sum = 0
  const samples = sampleIndices(buffer.count, sampleSize, createRandom(seed))
  for (const i of samples) {
    const d: number[] = []
    for (let j = 0; j < buffer.count; j++) {
      if (j !== i) d.push(Math.hypot(p[3 * i]! - p[3 * j]!, p[3 * i + 1]! - p[3 * j + 1]!, p[3 * i + 2]! - p[3 * j + 2]!))
    }
    sum += d.sort((a, b) => a - b)[rank - 1]!
  }
  return sum / samples.length
}

describe('estimateSpacing', () => {
  it('a regular 2 cm grid with +-1 mm noise comes out at 0.020 m within 5 %', () => {
    const grid = noisyGrid(200, 0.02, 0.001, 5)
    const spacing = estimateSpacing(grid)!
    expect(Math.abs(spacing - 0.02) / 0.02).toBeLessThan(0.05)
    // The plain nearest-neighbour mean is pulled low by the noise (the minimum over four neighbours), but is
    // still within 5 % here.
    const nearest = estimateSpacing(grid, { rank: 1 })!
    expect(nearest).toBeLessThan(spacing)
    expect(Math.abs(nearest - 0.02) / 0.02).toBeLessThan(0.05)
  })

  it('a noiseless grid gives exactly its step (derived)', () => {
    expect(estimateSpacing(noisyGrid(50, 0.02, 0, 1))).toBeCloseTo(0.02, 12)
    expect(estimateSpacing(noisyGrid(50, 0.02, 0, 1), { rank: 1 })).toBeCloseTo(0.02, 12)
  })

  it('the crate fixture (2 cm grid, +-1 mm noise) comes out at 0.020 m within 5 %', async () => {
    const crate = await readCrate()
    expect(crate.count).toBe(5220)
    // Fixture README: bounds min (-0.4010, -0.2510, -0.0010), max (0.4010, 0.2510, 0.6010).
    const bounds = bufferBounds(crate)!
    bounds.min.forEach((v, a) => expect(v).toBeCloseTo([-0.401, -0.251, -0.001][a]!, 3))
    bounds.max.forEach((v, a) => expect(v).toBeCloseTo([0.401, 0.251, 0.601][a]!, 3))
    const stats = computeScanStats(crate)
    expect(Math.abs(stats.spacing! - 0.02) / 0.02).toBeLessThan(0.05)
    // Why rank 2: the faces share their edge rows, so about a tenth of the points have a partner within a
    // few millimetres and the nearest-neighbour mean falls well below the grid step.
    expect(estimateSpacing(crate, { rank: 1 })!).toBeLessThan(0.019)
  })

  it('agrees with brute force on the same sample (grid search is exact)', () => {
    const buffer = mixedScene(6000, 3)
    for (const rank of [1, 2]) {
      expect(estimateSpacing(buffer, { sampleSize: 300, seed: 9, rank })).toBe(bruteSpacing(buffer, 300, 9, rank))
    }
  })

  it('is reproducible for a seed and needs more points than the rank', () => {
    const buffer = mixedScene(5000, 2)
    expect(estimateSpacing(buffer, { seed: 4 })).toBe(estimateSpacing(buffer, { seed: 4 }))
    expect(estimateSpacing(PointBuffer.fromArrays({ positions: new Float64Array([0, 0, 0, 1, 0, 0]) }))).toBeNull()
    expect(estimateSpacing(PointBuffer.fromArrays({ positions: new Float64Array([0, 0, 0, 1, 0, 0]) }), { rank: 1 })).toBe(1)
  })
})
