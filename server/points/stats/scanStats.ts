import type { Box3 } from '@shared/points/nodeKey'
import type { PointBuffer } from '../pointBuffer'
import { bufferBounds } from './bounds'
import { bufferGrid } from './bufferGrid'
import { estimatePointUncertainty, type PointUncertaintyEstimate, type UncertaintyOptions } from './pointUncertainty'
import { estimateSpacing } from './spacing'

/** What the upload job records per scan (server/points/README.md): bounds, mean spacing and the estimated uncertainty. */
export interface ScanStats {
  pointCount: number
  bounds: Box3 | null
  /** Mean distance to the second-nearest point, metres (see estimateSpacing). */
  spacing: number | null
  pointUncertainty: PointUncertaintyEstimate | null
}

/** Bounds, spacing and plane-fit uncertainty, sharing one neighbour grid over the buffer. */
export function computeScanStats(buffer: PointBuffer, options: Omit<UncertaintyOptions, 'grid'> = {}): ScanStats {
  const bounds = bufferBounds(buffer)
  if (buffer.count < 2) return { pointCount: buffer.count, bounds, spacing: null, pointUncertainty: null }
  const grid = bufferGrid(buffer)
  return {
    pointCount: buffer.count,
    bounds,
    spacing: estimateSpacing(buffer, { sampleSize: options.sampleSize, seed: options.seed, grid }),
    pointUncertainty: estimatePointUncertainty(buffer, { ...options, grid }),
  }
}
