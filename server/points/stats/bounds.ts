import type { Box3 } from '@shared/points/nodeKey'
import type { PointBuffer } from '../pointBuffer'

/** The axis-aligned bounds of a buffer's points (metres, the scan's frame), or null when it is empty. */
export function bufferBounds(buffer: PointBuffer): Box3 | null {
  const n = buffer.count
  if (n === 0) return null
  const p = buffer.positions
  let minX = Infinity, minY = Infinity, minZ = Infinity
  let maxX = -Infinity, maxY = -Infinity, maxZ = -Infinity
  for (let i = 0, j = 0; i < n; i++, j += 3) {
    const x = p[j]!, y = p[j + 1]!, z = p[j + 2]!
    if (x < minX) minX = x
    if (x > maxX) maxX = x
    if (y < minY) minY = y
    if (y > maxY) maxY = y
    if (z < minZ) minZ = z
    if (z > maxZ) maxZ = z
  }
  return { min: [minX, minY, minZ], max: [maxX, maxY, maxZ] }
}
