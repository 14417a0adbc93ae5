// Point uncertainty from local plane-fit residuals (Shakarji 1998, J. Res. NIST 103(6) for the fit). Reference:
// a synthetic plane with seeded Gaussian noise of known sigma (Box and Muller 1958 for the deviates), so the
// expected value is sigma by construction. The correction for the 3 fitted degrees of freedom and the chi-square
// median (Wilson and Hilferty 1931, PNAS 17) is checked on its own figures.
import { describe, expect, it } from 'vitest'
import { PointBuffer } from '../../../server/points/pointBuffer'
import { estimatePointUncertainty, residualCorrection } from '../../../server/points/stats/pointUncertainty'
import { createRandom, gaussian } from './factories'

/** A tilted plane sampled on a jittered 1 cm grid, with isotropic Gaussian noise sigma per axis. */
function noisyPlane(sigma: number, seed: number): PointBuffer {
  const random = createRandom(seed)
  const n = 250
  const positions = new Float64Array(n * n * 3)
  let j = 0
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      const u = (a + random() * 0.5) * 0.01, v = (b + random() * 0.5) * 0.01
      positions[j++] = 100 + u + gaussian(random) * sigma
      positions[j++] = 200 + v + gaussian(random) * sigma
      positions[j++] = 10 + 0.3 * u - 0.2 * v + gaussian(random) * sigma
    }
  }
  return PointBuffer.fromArrays({ positions })
}

describe('estimatePointUncertainty', () => {
  it('a plane with Gaussian noise of sigma 1 mm comes out near 1 mm', () => {
    const sigma = 0.001
    const samples = 2000
    const k = 16
    // Tolerance from the sample size: one sample's s = sqrt(chi^2(k-3) / (k-3)) has a relative standard deviation
    // of about 1 / sqrt(2 (k - 3)); the median of m samples has a standard error 1.2533 times that / sqrt(m)
    // (asymptotic variance of the sample median). Allow four standard errors.
    const tolerance = (4 * 1.2533) / Math.sqrt(2 * (k - 3)) / Math.sqrt(samples)
    for (const seed of [1, 2, 3]) {
      const estimate = estimatePointUncertainty(noisyPlane(sigma, 10 + seed), { sampleSize: samples, neighbours: k, seed })!
      expect(estimate.samples).toBe(samples)
      expect(Math.abs(estimate.value - sigma) / sigma).toBeLessThan(tolerance)
      // Uncorrected, the median RMS sits about 12 % low (k - 3 degrees of freedom of k, and the chi-square median).
      expect(estimate.medianRms).toBeLessThan(0.92 * sigma)
    }
  })

  it('scales with the noise and gives 0 for a noiseless plane', () => {
    const half = estimatePointUncertainty(noisyPlane(0.0005, 4))!
    const double = estimatePointUncertainty(noisyPlane(0.002, 4))!
    expect(double.value / half.value).toBeCloseTo(4, 0)
    expect(estimatePointUncertainty(noisyPlane(0, 4))!.value).toBeLessThan(1e-9)
  })

  it('the degrees-of-freedom correction: sqrt(k / (k - 3)) over the root of the chi-square median ratio', () => {
    // Wilson-Hilferty: median of chi^2(13) is about 13 (1 - 2 / 117)^3 = 12.340 (chi-square tables, from memory: 12.340).
    expect(13 * (1 - 2 / 117) ** 3).toBeCloseTo(12.34, 2)
    expect(residualCorrection(16)).toBeCloseTo(Math.sqrt(16 / 12.34), 3)
  })

  it('needs at least k points and a sensible k', () => {
    expect(estimatePointUncertainty(PointBuffer.fromArrays({ positions: new Float64Array(30) }))).toBeNull()
    expect(() => estimatePointUncertainty(noisyPlane(0.001, 1), { neighbours: 3 })).toThrow(RangeError)
  })
})
