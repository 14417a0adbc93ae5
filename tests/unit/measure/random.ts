// Seeded generators for the Monte Carlo and randomised reference checks (mulberry32, public domain,
// from memory; normal deviates by Box-Muller).
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export function normal(rand: () => number): () => number {
  return () => {
    const u1 = 1 - rand()
    const u2 = rand()
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2)
  }
}

/** Sample standard deviation (n - 1). */
export function sampleStd(values: ArrayLike<number>): number {
  let mean = 0
  for (let i = 0; i < values.length; i++) mean += values[i]!
  mean /= values.length
  let ss = 0
  for (let i = 0; i < values.length; i++) ss += (values[i]! - mean) ** 2
  return Math.sqrt(ss / (values.length - 1))
}

/**
 * Tolerance for a sample standard deviation from N normal draws: its standard error is about
 * sigma / sqrt(2 (N - 1)) (large-sample result, from memory); four of those make a false failure
 * vanishingly rare with a fixed seed anyway.
 */
export function stdTolerance(sigma: number, samples: number): number {
  return (4 * sigma) / Math.sqrt(2 * (samples - 1))
}
