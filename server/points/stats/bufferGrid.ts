import { UniformGrid } from '../index/uniformGrid'
import type { PointBuffer } from '../pointBuffer'

/**
 * The neighbour-search grid the scan statistics share: one counting sort over the whole buffer (two passes,
 * no per-point objects), about 4 bytes a point for the order plus at most 32 MB of cell starts.
 */
export function bufferGrid(buffer: PointBuffer): UniformGrid {
  return new UniformGrid(buffer.positions, buffer.count, [0, 0, 0], { pointsPerCell: 2, maxCells: 1 << 23 })
}
