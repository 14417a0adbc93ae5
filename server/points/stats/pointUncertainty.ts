import { fitPlane } from '@shared/geometry/planeFit'
import { KBest } from '../index/kBest'
import type { PointBuffer } from '../pointBuffer'
import { bufferGrid } from './bufferGrid'
import { createRandom, sampleIndices } from './random'
import { DEFAULT_SAMPLE_SIZE, DEFAULT_SEED, type SampleOptions } from './spacing'

/**
 * One standard uncertainty per scan from local plane-fit residuals (shared/measure/README.md, "An anchor's budget"; for formats without per-point
 * uncertainty): for each sampled point, its k nearest points (itself included) are fitted with a plane by
 * PCA and the orthogonal RMS residual sqrt(lambda_min) taken (Shakarji 1998, J. Res. NIST 103(6)); the scan's
 * value is the median over the samples, robust against samples on edges and corners.
 *
 * The RMS divides the residual sum of squares by k, and a fitted plane absorbs 3 degrees of freedom, so for
 * noise sigma along the normal the sum is about sigma^2 chi^2(k - 3) (residual standard deviation with n - p
 * degrees of freedom, as in ordinary regression). `value` therefore rescales the median RMS by
 * sqrt(k / (k - 3)) and by the median of chi^2(nu) / nu, (1 - 2 / (9 nu))^3 (Wilson and Hilferty 1931, PNAS
 * 17), so that it estimates sigma itself; `medianRms` is the uncorrected figure. Neighbourhoods that do not
 * span a plane (collinear scan lines) are skipped. Metres.
 */

export interface UncertaintyOptions extends SampleOptions {
  /** Neighbours per plane fit, itself included (default 16; at least 4). */
  neighbours?: number
}

export interface PointUncertaintyEstimate {
  /** Estimated standard uncertainty of one point along the surface normal, metres. */
  value: number
  /** Median of the per-sample orthogonal RMS residuals, metres (before the degrees-of-freedom correction). */
  medianRms: number
  /** Samples that gave a plane. */
  samples: number
  neighbours: number
}

export const DEFAULT_NEIGHBOURS = 16

/** sqrt(k / (k - 3)) / sqrt(median(chi^2(k - 3)) / (k - 3)). */
export function residualCorrection(k: number): number {
  const nu = k - 3
  const medianRatio = (1 - 2 / (9 * nu)) ** 3
  return Math.sqrt(k / nu / medianRatio)
}

export function estimatePointUncertainty(buffer: PointBuffer, options: UncertaintyOptions = {}): PointUncertaintyEstimate | null {
  const k = options.neighbours ?? DEFAULT_NEIGHBOURS
  if (!Number.isInteger(k) || k < 4) throw new RangeError(`neighbours must be a whole number of at least 4, got ${k}`)
  if (buffer.count < k) return null
  const grid = options.grid ?? bufferGrid(buffer)
  const samples = sampleIndices(buffer.count, options.sampleSize ?? DEFAULT_SAMPLE_SIZE, createRandom(options.seed ?? DEFAULT_SEED))
  const heap = new KBest(k)
  const p = buffer.positions
  const patch = new Float64Array(k * 3)
  const rms: number[] = []
  for (const i of samples) {
    heap.reset()
    grid.nearest(p[3 * i]!, p[3 * i + 1]!, p[3 * i + 2]!, heap)
    for (let s = 0; s < k; s++) {
      patch[3 * s] = heap.xs[s]!
      patch[3 * s + 1] = heap.ys[s]!
      patch[3 * s + 2] = heap.zs[s]!
    }
    const fit = fitPlane(patch, heap.size)
    if (fit) rms.push(fit.rms)
  }
  if (rms.length === 0) return null
  const medianRms = median(rms)
  return { value: medianRms * residualCorrection(k), medianRms, samples: rms.length, neighbours: k }
}

function median(values: number[]): number {
  const sorted = Float64Array.from(values).sort()
  const mid = sorted.length >> 1
  return sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2
}
