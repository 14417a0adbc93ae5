/**
 * Seeded pseudo-random numbers for reproducible sampling (the same scan always gets the same estimate).
 * mulberry32, a 32-bit generator by Tommy Ettinger (public domain; constants from memory): fast, and ample
 * for choosing a few thousand sample points.
 */
export type Random = () => number

export function createRandom(seed: number): Random {
  let state = seed >>> 0
  return () => {
    state = (state + 0x6d2b79f5) >>> 0
    let t = state
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

/** A standard normal deviate by the Box-Muller transform (Box and Muller 1958, Ann. Math. Statist. 29). */
export function gaussian(random: Random): number {
  let u = 0
  while (u === 0) u = random()
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random())
}

/**
 * m distinct indices from 0..n-1, uniformly, in ascending order (Floyd's algorithm: Bentley and Floyd 1987,
 * CACM 30(9)). All of them when m >= n.
 */
export function sampleIndices(n: number, m: number, random: Random): Uint32Array {
  if (m >= n) return Uint32Array.from({ length: n }, (_, i) => i)
  const chosen = new Set<number>()
  for (let j = n - m; j < n; j++) {
    const t = Math.floor(random() * (j + 1))
    chosen.add(chosen.has(t) ? j : t)
  }
  return Uint32Array.from(chosen).sort()
}
