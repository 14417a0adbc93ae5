import { boxCentre } from '@shared/points/nodeKey'
import { allocateTile } from '@shared/points/tileFormat'
import type { PointBuffer } from '../pointBuffer'
import type { OctreeNode } from './buildOctree'

/**
 * Encodes one node's points as a tile (shared/points/tileFormat.ts): positions as float32 offsets from the
 * centre of the node's cube, computed in float64 and rounded once to float32 (see positionRoundingBound),
 * attributes copied as they are. Written straight into the tile's bytes.
 */
export function encodeNodeTile(buffer: PointBuffer, node: Pick<OctreeNode, 'bounds' | 'indices'>): Uint8Array {
  const indices = node.indices
  const count = indices.length
  const origin = boxCentre(node.bounds)
  const writer = allocateTile(count, origin, {
    colors: buffer.colors !== null,
    intensities: buffer.intensities !== null,
    uncertainties: buffer.uncertainties !== null,
  })
  const source = buffer.positions
  const target = writer.positions
  const ox = origin[0], oy = origin[1], oz = origin[2]
  for (let i = 0, t = 0; i < count; i++, t += 3) {
    const s = indices[i]! * 3
    target[t] = source[s]! - ox
    target[t + 1] = source[s + 1]! - oy
    target[t + 2] = source[s + 2]! - oz
  }
  const colors = buffer.colors
  if (colors && writer.colors) {
    const out = writer.colors
    for (let i = 0, t = 0; i < count; i++, t += 3) {
      const s = indices[i]! * 3
      out[t] = colors[s]!
      out[t + 1] = colors[s + 1]!
      out[t + 2] = colors[s + 2]!
    }
  }
  gather(buffer.intensities, writer.intensities, indices)
  gather(buffer.uncertainties, writer.uncertainties, indices)
  return writer.finish()
}

function gather(source: Float32Array | null, target: Float32Array | null, indices: Uint32Array): void {
  if (!source || !target) return
  for (let i = 0; i < indices.length; i++) target[i] = source[indices[i]!]!
}
