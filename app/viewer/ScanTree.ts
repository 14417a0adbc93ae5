/**
 * A scan's octree as the hierarchy endpoint describes it (shared/points/nodeKey.ts has the key scheme). Every
 * stored point is in exactly one node, so drawing any set of nodes never hides another: full resolution at a
 * place is a leaf together with its ancestors. Boxes are cubes in the scan's own frame, metres.
 */
import type { Hierarchy } from '@shared/schemas'
import { ROOT_KEY, parentKey } from '@shared/points/nodeKey'
import type { Vec3 } from './types'

export interface TreeNode {
  key: string
  level: number
  pointCount: number
  byteSize: number
  /** Centre of the node's cube, scan frame (also its tile's origin). */
  centre: Vec3
  /** Edge of the cube, metres. */
  edge: number
  /** Radius of the sphere around the cube. */
  radius: number
  children: TreeNode[]
}

export class ScanTree {
  readonly nodes = new Map<string, TreeNode>()
  readonly root: TreeNode | null
  readonly pointCount: number
  /** Tight bounds of the scan's points, scan frame. */
  readonly bounds: { min: Vec3; max: Vec3 }

  constructor(hierarchy: Hierarchy) {
    this.pointCount = hierarchy.pointCount
    this.bounds = { min: [...hierarchy.bounds.min], max: [...hierarchy.bounds.max] }
    for (const n of hierarchy.nodes) {
      const { min, max } = n.bounds
      const edge = Math.max(max[0] - min[0], max[1] - min[1], max[2] - min[2])
      this.nodes.set(n.key, {
        key: n.key,
        level: n.level,
        pointCount: n.pointCount,
        byteSize: n.byteSize,
        centre: [(min[0] + max[0]) / 2, (min[1] + max[1]) / 2, (min[2] + max[2]) / 2],
        edge,
        radius: (edge * Math.sqrt(3)) / 2,
        children: [],
      })
    }
    // Link after all nodes exist: the endpoint's order is not relied on. A node whose parent is missing
    // would be unreachable; the server never sends one, and it is then simply not drawn.
    for (const node of this.nodes.values()) {
      const parent = parentKey(node.key)
      if (parent !== null) this.nodes.get(parent)?.children.push(node)
    }
    for (const node of this.nodes.values()) node.children.sort((a, b) => (a.key < b.key ? -1 : 1))
    this.root = this.nodes.get(ROOT_KEY) ?? null
  }
}
