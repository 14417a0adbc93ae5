// Small seeded factories of synthetic point sets for the octree, index and statistics tests.
import { PointBuffer } from '../../../server/points/pointBuffer'
import { createRandom, gaussian, type Random } from '../../../server/points/stats/random'

export { createRandom, gaussian }

/**
 * Points on a few surfaces (a floor, two walls, a column) plus a dense blob and some exact duplicates:
 * uneven density, so the tree gets deep in places and shallow in others.
 */
export function mixedScene(count: number, seed: number, offset: [number, number, number] = [0, 0, 0]): PointBuffer {
  const random = createRandom(seed)
  const positions = new Float64Array(count * 3)
  const colors = new Uint8Array(count * 3)
  const intensities = new Float32Array(count)
  for (let i = 0; i < count; i++) {
    const [x, y, z] = scenePoint(random, i)
    positions[3 * i] = x + offset[0]
    positions[3 * i + 1] = y + offset[1]
    positions[3 * i + 2] = z + offset[2]
    colors[3 * i] = i & 255
    colors[3 * i + 1] = (i >> 8) & 255
    colors[3 * i + 2] = (i >> 16) & 255
    intensities[i] = i % 4096
  }
  return PointBuffer.fromArrays({ positions, colors, intensities })
}

function scenePoint(random: Random, i: number): [number, number, number] {
  const noise = () => gaussian(random) * 0.002
  const pick = random()
  if (pick < 0.35) return [random() * 8, random() * 6, noise()]
  if (pick < 0.55) return [random() * 8, noise(), random() * 3]
  if (pick < 0.7) return [noise() + 8, random() * 6, random() * 3]
  if (pick < 0.85) {
    const angle = random() * 2 * Math.PI
    return [3 + 0.2 * Math.cos(angle) + noise(), 4 + 0.2 * Math.sin(angle) + noise(), random() * 3]
  }
  if (pick < 0.97) return [5 + gaussian(random) * 0.05, 2 + gaussian(random) * 0.05, 1 + gaussian(random) * 0.05]
  // Exact duplicates of a few fixed spots.
  return [1 + (i % 3) * 0.25, 1, 0.5]
}

/** A square grid of `n` x `n` points `step` apart in the plane z = 0, with uniform noise of +-`noise` per axis. */
export function noisyGrid(n: number, step: number, noise: number, seed: number): PointBuffer {
  const random = createRandom(seed)
  const positions = new Float64Array(n * n * 3)
  let j = 0
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      positions[j++] = a * step + (random() * 2 - 1) * noise
      positions[j++] = b * step + (random() * 2 - 1) * noise
      positions[j++] = (random() * 2 - 1) * noise
    }
  }
  return PointBuffer.fromArrays({ positions })
}
