import { MAX_LEVEL, ROOT_KEY, childBox, childKey, copyBox, type Box3, type NodeInfo, type Vec3 } from '@shared/points/nodeKey'
import type { PointBuffer } from '../pointBuffer'
import { bufferBounds } from '../stats/bounds'

/**
 * Level-of-detail octree over a PointBuffer (level of detail, common practice; octree after Meagher 1982: root cube around the bounds, cell
 * edge S / 2^L at level L, each node a thinned subsample).
 *
 * Every point is stored in exactly one node. A node with more than `maxLeafPoints` points keeps a spatially
 * even subsample, the first point that falls in each cell of a gridResolution^3 grid over its cube, and
 * passes the rest to its eight children; a leaf keeps everything that reaches it. So the root alone is the
 * coarsest view, and the full-resolution points at a place are one leaf together with its ancestors.
 *
 * Keys, the half-open rule for points on a boundary, and box arithmetic: shared/points/nodeKey.ts. The root
 * cube is centred on the bounds with edge max(largest extent, minNodeSize); a node stops splitting when its
 * children would be smaller than minNodeSize or when it is at MAX_LEVEL, and then keeps all its points even
 * above maxLeafPoints (all points identical, or a cluster tighter than the floor). If a subsample would
 * exceed maxLeafPoints (points filling a volume, not a surface) the grid is halved until it does not, so no
 * node but such a floor leaf holds more than maxLeafPoints points.
 *
 * Work: O(n) per level (one pass that samples and classifies, one stable counting scatter); memory: a
 * Uint32 permutation of n (kept, the nodes' indices are views into it) and a Uint32 + Uint8 scratch of n
 * plus a Uint32 grid of gridResolution^3 stamps, freed on return. No per-point objects.
 */

export interface OctreeOptions {
  /** Most points a node may hold before it splits (default 50 000). */
  maxLeafPoints?: number
  /** Cells per axis of a node's sampling grid, 1-256 (default 128). */
  gridResolution?: number
  /** Smallest node edge in metres: the root is at least this big; no child is made below it (default 1 mm). */
  minNodeSize?: number
  /** Called with each node as soon as its points are final, parents before children (depth first). */
  onNode?: (node: OctreeNode) => void
}

export interface OctreeNode extends NodeInfo {
  /** Indices into the buffer of the points this node stores: a view into Octree.indices. */
  indices: Uint32Array
  /** Edge of the sampling grid's cells in metres (no two kept points share a cell); null for a leaf. */
  sampleSpacing: number | null
  /** Bit i set when child i exists (children without points are not made). */
  childMask: number
}

export interface Octree {
  pointCount: number
  /** Tight bounds of the points. */
  bounds: Box3
  /** The root's cube. */
  rootBox: Box3
  /** Every node, parents before children, children in digit order (so keys sort the same way). */
  nodes: OctreeNode[]
  /** A permutation of 0..n-1, grouped by node. */
  indices: Uint32Array
  /** The deepest level reached. */
  depth: number
}

export const DEFAULT_MAX_LEAF_POINTS = 50_000
export const DEFAULT_GRID_RESOLUTION = 128
export const DEFAULT_MIN_NODE_SIZE = 0.001

interface Task {
  key: string
  level: number
  start: number
  end: number
  box: Box3
}

/**
 * A cube centred on `bounds` with edge max(largest extent, minSize); a face that rounding left a hair inside
 * the bounds is moved out to them, so the cube surely contains every point.
 */
export function rootCube(bounds: Box3, minSize: number): Box3 {
  const extent = Math.max(bounds.max[0] - bounds.min[0], bounds.max[1] - bounds.min[1], bounds.max[2] - bounds.min[2])
  const half = Math.max(extent, minSize) / 2
  const min: Vec3 = [0, 0, 0]
  const max: Vec3 = [0, 0, 0]
  for (let axis = 0; axis < 3; axis++) {
    const centre = (bounds.min[axis]! + bounds.max[axis]!) / 2
    min[axis] = Math.min(centre - half, bounds.min[axis]!)
    max[axis] = Math.max(centre + half, bounds.max[axis]!)
  }
  return { min, max }
}

function positiveInteger(name: string, value: number, max = Number.MAX_SAFE_INTEGER): number {
  if (!Number.isInteger(value) || value < 1 || value > max) throw new RangeError(`${name} must be a whole number from 1 to ${max}, got ${value}`)
  return value
}

export function buildOctree(buffer: PointBuffer, options: OctreeOptions = {}): Octree {
  const maxLeaf = positiveInteger('maxLeafPoints', options.maxLeafPoints ?? DEFAULT_MAX_LEAF_POINTS)
  const resolution = positiveInteger('gridResolution', options.gridResolution ?? DEFAULT_GRID_RESOLUTION, 256)
  const minNodeSize = options.minNodeSize ?? DEFAULT_MIN_NODE_SIZE
  if (!(minNodeSize > 0) || !Number.isFinite(minNodeSize)) throw new RangeError(`minNodeSize must be above 0, got ${minNodeSize}`)
  const bounds = bufferBounds(buffer)
  if (!bounds) throw new RangeError('an octree needs at least one point')

  const n = buffer.count
  const positions = buffer.positions
  const indices = new Uint32Array(n)
  for (let i = 0; i < n; i++) indices[i] = i
  const rootBox = rootCube(bounds, minNodeSize)
  const nodes: OctreeNode[] = []
  let scratch: Uint32Array | null = null
  let codes: Uint8Array | null = null
  let stamps: Uint32Array | null = null
  let generation = 0
  let depth = 0
  const counts = new Int32Array(8)
  const stack: Task[] = [{ key: ROOT_KEY, level: 0, start: 0, end: n, box: rootBox }]

  const emit = (task: Task, end: number, sampleSpacing: number | null, childMask: number): void => {
    const node: OctreeNode = {
      key: task.key,
      level: task.level,
      bounds: task.box,
      pointCount: end - task.start,
      indices: indices.subarray(task.start, end),
      sampleSpacing,
      childMask,
    }
    nodes.push(node)
    if (task.level > depth) depth = task.level
    options.onNode?.(node)
  }

  while (stack.length > 0) {
    const task = stack.pop()!
    const count = task.end - task.start
    const box = task.box
    const edge = Math.min(box.max[0] - box.min[0], box.max[1] - box.min[1], box.max[2] - box.min[2])
    if (count <= maxLeaf || task.level >= MAX_LEVEL || edge / 2 < minNodeSize) {
      emit(task, task.end, null, 0)
      continue
    }
    scratch ??= new Uint32Array(n)
    codes ??= new Uint8Array(n)
    stamps ??= new Uint32Array(resolution ** 3)
    let grid = resolution
    let kept: number
    for (;;) {
      generation++
      const limit = grid === 1 ? count : maxLeaf
      kept = sampleAndClassify(positions, indices, task.start, task.end, box, grid, stamps, generation, scratch, codes, limit)
      if (kept <= limit) break
      // A volume-filling node: the pass stopped as soon as the sample outgrew the limit. Put the points it
      // moved aside back behind the kept ones (the rest were not touched) and sample on a coarser grid.
      indices.set(scratch.subarray(0, progress[0]! - kept), task.start + kept)
      grid >>= 1
    }
    const firstChild = task.start + kept
    const childMask = scatterToChildren(indices, firstChild, count - kept, scratch, codes, counts)
    emit(task, firstChild, edge / grid, childMask)
    let childEnd = task.end
    for (let octant = 7; octant >= 0; octant--) {
      const childCount = counts[octant]!
      if (childCount === 0) continue
      stack.push({
        key: childKey(task.key, octant),
        level: task.level + 1,
        start: childEnd - childCount,
        end: childEnd,
        box: childBox(box, octant),
      })
      childEnd -= childCount
    }
  }
  return { pointCount: n, bounds, rootBox, nodes, indices, depth }
}

/** How many points the last sampleAndClassify pass read (less than the node's count when it stopped early). */
const progress = new Int32Array(1)

/**
 * One pass over indices[start, end): the first point in each sampling cell is moved to the front (in place:
 * the write position never passes the read position); every other point goes to `rest` with its octant
 * code. Returns how many were kept; stops as soon as that exceeds `limit`. Cells are marked with
 * `generation`, so the stamps never need clearing.
 */
function sampleAndClassify(
  p: Float64Array,
  indices: Uint32Array,
  start: number,
  end: number,
  box: Box3,
  grid: number,
  stamps: Uint32Array,
  generation: number,
  rest: Uint32Array,
  codes: Uint8Array,
  limit: number,
): number {
  const minX = box.min[0], minY = box.min[1], minZ = box.min[2]
  const scaleX = grid / (box.max[0] - minX), scaleY = grid / (box.max[1] - minY), scaleZ = grid / (box.max[2] - minZ)
  const midX = (minX + box.max[0]) / 2, midY = (minY + box.max[1]) / 2, midZ = (minZ + box.max[2]) / 2
  const last = grid - 1
  let kept = 0
  let others = 0
  for (let i = start; i < end; i++) {
    const index = indices[i]!
    const j = index * 3
    const x = p[j]!, y = p[j + 1]!, z = p[j + 2]!
    let ix = ((x - minX) * scaleX) | 0
    let iy = ((y - minY) * scaleY) | 0
    let iz = ((z - minZ) * scaleZ) | 0
    if (ix > last) ix = last
    if (iy > last) iy = last
    if (iz > last) iz = last
    const cell = ix + grid * (iy + grid * iz)
    if (stamps[cell] !== generation) {
      stamps[cell] = generation
      indices[start + kept++] = index
      if (kept > limit) {
        progress[0] = i + 1 - start
        return kept
      }
    } else {
      codes[others] = (x >= midX ? 1 : 0) | (y >= midY ? 2 : 0) | (z >= midZ ? 4 : 0)
      rest[others++] = index
    }
  }
  progress[0] = end - start
  return kept
}

/** Stable counting scatter of rest[0, count) into indices[at, at + count) by octant; returns the child mask. */
function scatterToChildren(
  indices: Uint32Array,
  at: number,
  count: number,
  rest: Uint32Array,
  codes: Uint8Array,
  counts: Int32Array,
): number {
  counts.fill(0)
  for (let r = 0; r < count; r++) counts[codes[r]!]!++
  const next = new Int32Array(8)
  let mask = 0
  let offset = at
  for (let octant = 0; octant < 8; octant++) {
    next[octant] = offset
    offset += counts[octant]!
    if (counts[octant]! > 0) mask |= 1 << octant
  }
  for (let r = 0; r < count; r++) indices[next[codes[r]!]!++] = rest[r]!
  return mask
}

/** The hierarchy as the API and the nearest-point index see it (no point indices). */
export function hierarchyOf(tree: Octree): NodeInfo[] {
  return tree.nodes.map((node) => ({
    key: node.key,
    level: node.level,
    bounds: copyBox(node.bounds),
    pointCount: node.pointCount,
  }))
}
