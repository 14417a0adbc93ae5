// The level-of-detail octree (level of detail, common practice; octree after Meagher 1982: root cube around the bounds, cell edge S / 2^L at level L,
// each node a thinned subsample; common practice, no source). The checks are the structure's own invariants,
// verified point by point against the input: every point in exactly one node, boxes nested by the documented
// half-open rule, counts that add up, leaves under the limit, subsamples with one point per grid cell.
import { describe, expect, it } from 'vitest'
import { childBox, type Box3 } from '@shared/points/nodeKey'
import { decodeTile, positionRoundingBound } from '@shared/points/tileFormat'
import { PointBuffer } from '../../../server/points/pointBuffer'
import { buildOctree, hierarchyOf, rootCube, type Octree, type OctreeNode } from '../../../server/points/octree/buildOctree'
import { encodeNodeTile } from '../../../server/points/octree/nodeTile'
import { bufferBounds } from '../../../server/points/stats/bounds'
import { createRandom, mixedScene } from './factories'

interface Limits {
  maxLeafPoints: number
  minNodeSize: number
}

const edgeOf = (box: Box3) => box.max[0] - box.min[0]

/** Checks every invariant and returns the number of violations of each kind (all should be 0). */
function violations(tree: Octree, buffer: PointBuffer, limits: Limits) {
  const found = { multiplicity: 0, outsideBox: 0, badChildBox: 0, orphan: 0, mask: 0, overfull: 0, sampleCell: 0, level: 0 }
  const n = buffer.count
  const seen = new Uint8Array(n)
  const byKey = new Map(tree.nodes.map((node) => [node.key, node]))
  const root = byKey.get('r')!
  const p = buffer.positions
  let total = 0
  for (const node of tree.nodes) {
    total += node.pointCount
    if (node.indices.length !== node.pointCount) found.multiplicity++
    if (node.level !== node.key.length - 1) found.level++
    for (const i of node.indices) {
      if (seen[i]! > 0) found.multiplicity++
      seen[i] = seen[i]! + 1
      for (let axis = 0; axis < 3; axis++) {
        const v = p[3 * i + axis]!
        const closedTop = node.bounds.max[axis] === root.bounds.max[axis]
        if (v < node.bounds.min[axis]! || v > node.bounds.max[axis]! || (v === node.bounds.max[axis] && !closedTop)) found.outsideBox++
      }
    }
    if (node.key !== 'r') {
      const parent = byKey.get(node.key.slice(0, -1))
      const octant = Number(node.key.at(-1))
      if (!parent) found.orphan++
      else {
        const expected = childBox(parent.bounds, octant)
        if (JSON.stringify(expected) !== JSON.stringify(node.bounds)) found.badChildBox++
        for (let axis = 0; axis < 3; axis++) {
          if (node.bounds.min[axis]! < parent.bounds.min[axis]! || node.bounds.max[axis]! > parent.bounds.max[axis]!) found.badChildBox++
        }
        if (!(parent.childMask & (1 << octant))) found.mask++
      }
    }
    for (let octant = 0; octant < 8; octant++) {
      if (Boolean(node.childMask & (1 << octant)) !== byKey.has(node.key + octant)) found.mask++
    }
    const floorCase = edgeOf(node.bounds) / 2 < limits.minNodeSize
    if (node.pointCount > limits.maxLeafPoints && !floorCase) found.overfull++
    if (node.sampleSpacing !== null) found.sampleCell += sharedCells(node, buffer)
  }
  for (let i = 0; i < n; i++) if (seen[i] !== 1) found.multiplicity++
  if (total !== n) found.multiplicity++
  return found
}

/** Kept points of a subsampling node that share a cell of its grid. */
function sharedCells(node: OctreeNode, buffer: PointBuffer): number {
  const grid = Math.round(edgeOf(node.bounds) / node.sampleSpacing!)
  const cells = new Set<number>()
  let shared = 0
  for (const i of node.indices) {
    const cell = cellOf(node.bounds, grid, buffer, i)
    if (cells.has(cell)) shared++
    cells.add(cell)
  }
  return shared
}

function cellOf(box: Box3, grid: number, buffer: PointBuffer, i: number): number {
  let cell = 0
  for (let axis = 2; axis >= 0; axis--) {
    const t = (buffer.positions[3 * i + axis]! - box.min[axis]!) / (box.max[axis]! - box.min[axis]!)
    cell = cell * grid + Math.min(grid - 1, Math.floor(t * grid))
  }
  return cell
}

/** The indices of a node and all its descendants: contiguous in tree.indices (pre-order layout). */
function subtreeIndices(tree: Octree, node: OctreeNode): Uint32Array {
  const start = node.indices.byteOffset / 4
  let count = 0
  for (const other of tree.nodes) if (other.key.startsWith(node.key)) count += other.pointCount
  return tree.indices.subarray(start, start + count)
}

const NONE = { multiplicity: 0, outsideBox: 0, badChildBox: 0, orphan: 0, mask: 0, overfull: 0, sampleCell: 0, level: 0 }

describe('buildOctree on a few hundred thousand points', () => {
  const buffer = mixedScene(300_000, 11)
  const limits = { maxLeafPoints: 4000, minNodeSize: 0.001 }
  const tree = buildOctree(buffer, { ...limits, gridResolution: 32 })

  it('puts every point in exactly one node, inside its box, with nested boxes and counts that add up', () => {
    expect(tree.depth).toBeGreaterThanOrEqual(4)
    expect(tree.nodes.length).toBeGreaterThan(50)
    expect(violations(tree, buffer, limits)).toEqual(NONE)
    expect(tree.nodes[0]!.key).toBe('r')
    expect(tree.rootBox).toEqual(rootCube(bufferBounds(buffer)!, 0.001))
  })

  it('lists parents before children, in key order', () => {
    const keys = tree.nodes.map((node) => node.key)
    expect([...keys].sort()).toEqual(keys)
  })

  it('keeps a spatially even subsample: one point per occupied cell of the node grid', () => {
    for (const node of tree.nodes.filter((candidate) => candidate.level <= 1 && candidate.sampleSpacing !== null)) {
      const grid = Math.round(edgeOf(node.bounds) / node.sampleSpacing!)
      const kept = new Set(Array.from(node.indices, (i) => cellOf(node.bounds, grid, buffer, i)))
      const occupied = new Set(Array.from(subtreeIndices(tree, node), (i) => cellOf(node.bounds, grid, buffer, i)))
      // Every cell that any point of the region falls in has exactly one kept point, and no other cell does.
      expect(kept.size).toBe(node.pointCount)
      expect(kept).toEqual(occupied)
    }
  })

  it('stores the same multiset of positions in the tiles, to float32 rounding', () => {
    let worst = 0
    let mismatched = 0
    for (const node of tree.nodes) {
      const tile = decodeTile(encodeNodeTile(buffer, node))
      const bound = positionRoundingBound(edgeOf(node.bounds))
      for (let t = 0; t < tile.count; t++) {
        const i = node.indices[t]!
        for (let axis = 0; axis < 3; axis++) {
          const error = Math.abs(tile.origin[axis]! + tile.positions[3 * t + axis]! - buffer.positions[3 * i + axis]!)
          worst = Math.max(worst, error / bound)
        }
        if (tile.colors![3 * t] !== buffer.colors![3 * i] || tile.intensities![t] !== buffer.intensities![i]) mismatched++
      }
    }
    expect(mismatched).toBe(0)
    expect(worst).toBeLessThanOrEqual(1.0000001)
  })

  it('gives the hierarchy without point indices', () => {
    const hierarchy = hierarchyOf(tree)
    expect(hierarchy).toHaveLength(tree.nodes.length)
    expect(hierarchy[0]).toEqual({ key: 'r', level: 0, bounds: tree.rootBox, pointCount: tree.nodes[0]!.pointCount })
  })

  it('with the default options keeps tiles under 50 000 points', () => {
    const coarse = buildOctree(buffer)
    expect(violations(coarse, buffer, { maxLeafPoints: 50_000, minNodeSize: 0.001 })).toEqual(NONE)
    expect(coarse.depth).toBeGreaterThanOrEqual(1)
  })

  it('streams each node to onNode once its points are final, parents first', () => {
    const streamed: { key: string; indices: number[] }[] = []
    const again = buildOctree(buffer, { ...limits, gridResolution: 32, onNode: (node) => streamed.push({ key: node.key, indices: Array.from(node.indices) }) })
    expect(streamed.map((entry) => entry.key)).toEqual(again.nodes.map((node) => node.key))
    again.nodes.forEach((node, i) => expect(streamed[i]!.indices).toEqual(Array.from(node.indices)))
  })
})

describe('buildOctree edge cases', () => {
  it('a single point: one root node of the minimum size', () => {
    const buffer = PointBuffer.fromArrays({ positions: new Float64Array([12.5, -3, 7]) })
    const tree = buildOctree(buffer)
    expect(tree.nodes).toHaveLength(1)
    expect(tree.nodes[0]).toMatchObject({ key: 'r', level: 0, pointCount: 1, childMask: 0, sampleSpacing: null })
    expect(edgeOf(tree.rootBox)).toBeCloseTo(0.001, 12)
    expect(tree.rootBox.min[0]).toBeLessThanOrEqual(12.5)
    expect(tree.rootBox.max[0]).toBeGreaterThanOrEqual(12.5)
  })

  it('all points identical: one leaf above the max count, since no cell may be smaller than the floor', () => {
    const positions = new Float64Array(100_000 * 3)
    for (let i = 0; i < 100_000; i++) positions.set([1234.5, -77.25, 3.125], i * 3)
    const buffer = PointBuffer.fromArrays({ positions })
    const tree = buildOctree(buffer, { maxLeafPoints: 1000 })
    expect(tree.nodes).toHaveLength(1)
    expect(tree.nodes[0]!.pointCount).toBe(100_000)
    expect(violations(tree, buffer, { maxLeafPoints: 1000, minNodeSize: 0.001 })).toEqual(NONE)
  })

  it('a tight cluster among scattered points ends in one floor-sized leaf', () => {
    const random = createRandom(5)
    const positions: number[] = []
    for (let i = 0; i < 20_000; i++) positions.push(2, 3, 1)
    for (let i = 0; i < 50; i++) positions.push(random() * 10, random() * 10, random() * 10)
    const buffer = PointBuffer.fromArrays({ positions: Float64Array.from(positions) })
    const limits = { maxLeafPoints: 1000, minNodeSize: 0.001 }
    const tree = buildOctree(buffer, limits)
    expect(violations(tree, buffer, limits)).toEqual(NONE)
    const big = tree.nodes.filter((node) => node.pointCount > 1000)
    expect(big).toHaveLength(1)
    expect(big[0]!.childMask).toBe(0)
    expect(edgeOf(big[0]!.bounds)).toBeLessThan(0.002)
    expect(big[0]!.pointCount).toBeGreaterThan(20_000 - 20)
  })

  it('points exactly on child boundaries follow the half-open rule', () => {
    // An integer lattice on [-4, 4]^3: the root cube is exactly that, so every mid-plane (0, +-2, +-1, +-3, ...)
    // passes through lattice points.
    const positions: number[] = []
    for (let x = -4; x <= 4; x++) for (let y = -4; y <= 4; y++) for (let z = -4; z <= 4; z++) positions.push(x, y, z)
    const buffer = PointBuffer.fromArrays({ positions: Float64Array.from(positions) })
    const limits = { maxLeafPoints: 4, minNodeSize: 0.001 }
    const tree = buildOctree(buffer, { ...limits, gridResolution: 1 })
    expect(tree.rootBox).toEqual({ min: [-4, -4, -4], max: [4, 4, 4] })
    expect(violations(tree, buffer, limits)).toEqual(NONE)
    const holder = (x: number, y: number, z: number) => {
      const index = ((x + 4) * 9 + (y + 4)) * 9 + (z + 4)
      return tree.nodes.find((node) => node.indices.includes(index))!
    }
    // On the root's mid-planes the upper side wins: (0, -1, -1) lies in x-upper, y-lower, z-lower: octant 1.
    const onPlane = holder(0, -1, -1)
    if (onPlane.key !== 'r') expect(onPlane.key[1]).toBe('1')
    // On the root's closed upper faces: (4, 4, 4) belongs to the all-upper corner.
    const corner = holder(4, 4, 4)
    if (corner.key !== 'r') expect(/^r7+$/.test(corner.key)).toBe(true)
    expect(corner.bounds.max).toEqual([4, 4, 4])
  })

  it('points filling a volume: the sampling grid is coarsened so no node exceeds the max count', () => {
    const random = createRandom(9)
    const positions = Float64Array.from({ length: 200_000 * 3 }, () => random() * 5)
    const buffer = PointBuffer.fromArrays({ positions })
    const limits = { maxLeafPoints: 5000, minNodeSize: 0.001 }
    const tree = buildOctree(buffer, { ...limits, gridResolution: 128 })
    expect(violations(tree, buffer, limits)).toEqual(NONE)
    const root = tree.nodes[0]!
    expect(root.sampleSpacing).toBeGreaterThan(edgeOf(root.bounds) / 128)
  })

  it('rejects an empty buffer and bad options', () => {
    expect(() => buildOctree(new PointBuffer())).toThrow(RangeError)
    const buffer = mixedScene(100, 1)
    expect(() => buildOctree(buffer, { maxLeafPoints: 0 })).toThrow(RangeError)
    expect(() => buildOctree(buffer, { gridResolution: 300 })).toThrow(RangeError)
    expect(() => buildOctree(buffer, { minNodeSize: 0 })).toThrow(RangeError)
  })
})
