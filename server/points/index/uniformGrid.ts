import type { KBest } from './kBest'

/**
 * A uniform grid of cubic cells over a set of points, built once in O(n) by a counting sort: `order` holds
 * the point indices grouped by cell and `cellStart[c] .. cellStart[c + 1]` is cell c's run. Used for a
 * tile's points in the nearest-point index and for a whole buffer in the scan statistics.
 *
 * Frames: `positions` are x y z interleaved in a local frame (a tile's float32 offsets, or a buffer's
 * float64 coordinates with a zero origin); world = origin + local, each coordinate summed once in float64.
 * Queries take world coordinates and every distance is computed from the world coordinates of the points,
 * so results agree with a brute-force search over origin + offset. The grid's own cell bounds live in the
 * local frame; pruning against them allows a slack of a few float64 ulps of the coordinates' magnitude,
 * so rounding in (query - origin) can never prune a point that is in fact closer.
 *
 * Cell size: the smallest cube edge for which the cell count does not exceed count / pointsPerCell (and
 * maxCells), found by bisection, so flat and elongated point sets get sensible grids too.
 */

export interface UniformGridOptions {
  /** Average points per cell if the points filled the box (default 2). */
  pointsPerCell?: number
  /** Upper limit on cells (default 2^22). */
  maxCells?: number
}

type Positions = Float32Array | Float64Array

const SLACK_ULPS = 8 * Number.EPSILON

export class UniformGrid {
  readonly count: number
  readonly origin: [number, number, number]
  readonly nx: number
  readonly ny: number
  readonly nz: number
  /** Cell edge (local units = metres). */
  readonly cell: number
  readonly minX: number
  readonly minY: number
  readonly minZ: number
  readonly order: Uint32Array
  readonly cellStart: Uint32Array
  private readonly positions: Positions
  /** Largest magnitude of a world or local coordinate this grid handles, for the rounding slack. */
  private readonly magnitude: number

  // Per-query state, so the cell visitor needs no closures in the hot loop.
  private qx = 0
  private qy = 0
  private qz = 0
  private lx = 0
  private ly = 0
  private lz = 0
  private eps = 0
  private heap: KBest | null = null
  private tag = 0
  private exclude = -1
  private bound2 = Infinity

  constructor(
    positions: Positions,
    count = Math.floor(positions.length / 3),
    origin: [number, number, number] = [0, 0, 0],
    options: UniformGridOptions = {},
  ) {
    this.positions = positions
    this.count = count
    this.origin = origin
    let minX = Infinity, minY = Infinity, minZ = Infinity
    let maxX = -Infinity, maxY = -Infinity, maxZ = -Infinity
    for (let j = 0; j < count * 3; j += 3) {
      const x = positions[j]!, y = positions[j + 1]!, z = positions[j + 2]!
      if (x < minX) minX = x
      if (x > maxX) maxX = x
      if (y < minY) minY = y
      if (y > maxY) maxY = y
      if (z < minZ) minZ = z
      if (z > maxZ) maxZ = z
    }
    if (count === 0) minX = minY = minZ = maxX = maxY = maxZ = 0
    this.minX = minX
    this.minY = minY
    this.minZ = minZ
    const ex = maxX - minX, ey = maxY - minY, ez = maxZ - minZ
    const target = Math.max(1, Math.min(options.maxCells ?? 1 << 22, Math.ceil(count / (options.pointsPerCell ?? 2))))
    this.cell = cellEdge(ex, ey, ez, target)
    this.nx = Math.max(1, Math.ceil(ex / this.cell))
    this.ny = Math.max(1, Math.ceil(ey / this.cell))
    this.nz = Math.max(1, Math.ceil(ez / this.cell))
    this.magnitude =
      Math.max(Math.abs(origin[0]), Math.abs(origin[1]), Math.abs(origin[2])) +
      Math.max(Math.abs(minX), Math.abs(minY), Math.abs(minZ), Math.abs(maxX), Math.abs(maxY), Math.abs(maxZ))

    const cells = this.nx * this.ny * this.nz
    const cellStart = new Uint32Array(cells + 1)
    const cellIds = new Uint32Array(count)
    assignCells(positions, count, minX, minY, minZ, 1 / this.cell, this.nx, this.ny, this.nz, cellIds)
    for (let i = 0; i < count; i++) cellStart[cellIds[i]! + 1]!++
    for (let c = 0; c < cells; c++) cellStart[c + 1]! += cellStart[c]!
    const order = new Uint32Array(count)
    const next = cellStart.slice(0, cells)
    for (let i = 0; i < count; i++) order[next[cellIds[i]!]!++] = i
    this.cellStart = cellStart
    this.order = order
  }

  get byteLength(): number {
    return this.order.byteLength + this.cellStart.byteLength
  }

  /**
   * Offers every point that could be among the heap's k nearest to (x, y, z) (world) to the heap, tagged
   * with `tag`; point `exclude` (an index into positions) is skipped. Cells are visited in Chebyshev rings
   * around the query's cell until the nearest unvisited cell is beyond the heap's bound.
   */
  nearest(x: number, y: number, z: number, heap: KBest, tag = 0, exclude = -1): void {
    if (this.count === 0) return
    this.qx = x
    this.qy = y
    this.qz = z
    this.lx = x - this.origin[0]
    this.ly = y - this.origin[1]
    this.lz = z - this.origin[2]
    this.eps = SLACK_ULPS * (this.magnitude + Math.abs(x) + Math.abs(y) + Math.abs(z))
    this.heap = heap
    this.tag = tag
    this.exclude = exclude
    this.bound2 = heap.bound2
    const { nx, ny, nz } = this
    const cx = clampCell(Math.floor((this.lx - this.minX) / this.cell), nx)
    const cy = clampCell(Math.floor((this.ly - this.minY) / this.cell), ny)
    const cz = clampCell(Math.floor((this.lz - this.minZ) / this.cell), nz)
    const rings = Math.max(cx, nx - 1 - cx, cy, ny - 1 - cy, cz, nz - 1 - cz)
    for (let m = 0; m <= rings; m++) {
      if (m > 0 && this.bound2 !== Infinity) {
        const outside = this.outsideBlock(cx, cy, cz, m - 1)
        if (outside - this.eps > Math.sqrt(this.bound2)) break
      }
      this.visitRing(cx, cy, cz, m)
    }
    this.heap = null
  }

  /** Calls `visit(index)` for every point whose world coordinates lie in the closed box. */
  forEachInBox(min: readonly number[], max: readonly number[], visit: (index: number) => void): void {
    if (this.count === 0) return
    const o = this.origin
    const range = (lo: number, hi: number, start: number, n: number): [number, number] => [
      clampCell(Math.floor((lo - start) / this.cell), n),
      clampCell(Math.floor((hi - start) / this.cell), n),
    ]
    const slack = SLACK_ULPS * (this.magnitude + Math.max(...min.map(Math.abs), ...max.map(Math.abs)))
    const [x0, x1] = range(min[0]! - o[0] - slack, max[0]! - o[0] + slack, this.minX, this.nx)
    const [y0, y1] = range(min[1]! - o[1] - slack, max[1]! - o[1] + slack, this.minY, this.ny)
    const [z0, z1] = range(min[2]! - o[2] - slack, max[2]! - o[2] + slack, this.minZ, this.nz)
    const p = this.positions
    for (let iz = z0; iz <= z1; iz++) {
      for (let iy = y0; iy <= y1; iy++) {
        const row = this.nx * (iy + this.ny * iz)
        for (let c = row + x0; c <= row + x1; c++) {
          for (let j = this.cellStart[c]!, end = this.cellStart[c + 1]!; j < end; j++) {
            const i = this.order[j]!
            const wx = o[0] + p[3 * i]!, wy = o[1] + p[3 * i + 1]!, wz = o[2] + p[3 * i + 2]!
            if (wx >= min[0]! && wx <= max[0]! && wy >= min[1]! && wy <= max[1]! && wz >= min[2]! && wz <= max[2]!) visit(i)
          }
        }
      }
    }
  }

  /**
   * A lower bound on the distance from the query to any cell outside the block of cells within Chebyshev
   * distance m of (cx, cy, cz). Sides of the block that reach the grid's edge have nothing beyond them.
   */
  private outsideBlock(cx: number, cy: number, cz: number, m: number): number {
    let best = Infinity
    best = Math.min(best, this.sideGap(this.lx, this.minX, cx, m, this.nx))
    best = Math.min(best, this.sideGap(this.ly, this.minY, cy, m, this.ny))
    best = Math.min(best, this.sideGap(this.lz, this.minZ, cz, m, this.nz))
    return best
  }

  private sideGap(q: number, start: number, c: number, m: number, n: number): number {
    let gap = Infinity
    if (c + m + 1 <= n - 1) gap = Math.min(gap, Math.max(0, start + (c + m + 1) * this.cell - q))
    if (c - m - 1 >= 0) gap = Math.min(gap, Math.max(0, q - (start + (c - m) * this.cell)))
    return gap
  }

  private visitRing(cx: number, cy: number, cz: number, m: number): void {
    const { nx, ny, nz } = this
    const x0 = Math.max(0, cx - m), x1 = Math.min(nx - 1, cx + m)
    const y0 = Math.max(0, cy - m), y1 = Math.min(ny - 1, cy + m)
    const z0 = Math.max(0, cz - m), z1 = Math.min(nz - 1, cz + m)
    for (let iz = z0; iz <= z1; iz++) {
      if (iz === cz - m || iz === cz + m) {
        for (let iy = y0; iy <= y1; iy++) for (let ix = x0; ix <= x1; ix++) this.visitCell(ix, iy, iz)
        continue
      }
      for (let iy = y0; iy <= y1; iy++) {
        if (iy === cy - m || iy === cy + m) {
          for (let ix = x0; ix <= x1; ix++) this.visitCell(ix, iy, iz)
        } else {
          if (cx - m >= 0) this.visitCell(cx - m, iy, iz)
          if (cx + m <= nx - 1 && m > 0) this.visitCell(cx + m, iy, iz)
        }
      }
    }
  }

  private visitCell(ix: number, iy: number, iz: number): void {
    const c = ix + this.nx * (iy + this.ny * iz)
    let j = this.cellStart[c]!
    const end = this.cellStart[c + 1]!
    if (j === end) return
    const cell = this.cell
    const bx = this.minX + ix * cell, by = this.minY + iy * cell, bz = this.minZ + iz * cell
    const dx = Math.max(bx - this.lx, 0, this.lx - (bx + cell))
    const dy = Math.max(by - this.ly, 0, this.ly - (by + cell))
    const dz = Math.max(bz - this.lz, 0, this.lz - (bz + cell))
    if (this.bound2 !== Infinity && Math.sqrt(dx * dx + dy * dy + dz * dz) - this.eps > Math.sqrt(this.bound2)) return
    const p = this.positions
    const ox = this.origin[0], oy = this.origin[1], oz = this.origin[2]
    const qx = this.qx, qy = this.qy, qz = this.qz
    const heap = this.heap!
    let bound2 = this.bound2
    for (; j < end; j++) {
      const i = this.order[j]!
      if (i === this.exclude) continue
      const wx = ox + p[3 * i]!, wy = oy + p[3 * i + 1]!, wz = oz + p[3 * i + 2]!
      const ddx = wx - qx, ddy = wy - qy, ddz = wz - qz
      const d2 = ddx * ddx + ddy * ddy + ddz * ddz
      if (d2 <= bound2) bound2 = heap.offer(d2, wx, wy, wz, this.tag, i)
    }
    this.bound2 = bound2
  }
}

/** Cell number of every point (a temporary: 4 bytes a point while the grid is built). */
function assignCells(
  p: Positions,
  count: number,
  minX: number,
  minY: number,
  minZ: number,
  inv: number,
  nx: number,
  ny: number,
  nz: number,
  out: Uint32Array,
): void {
  const lastX = nx - 1, lastY = ny - 1, lastZ = nz - 1
  for (let i = 0, j = 0; i < count; i++, j += 3) {
    let ix = Math.floor((p[j]! - minX) * inv)
    let iy = Math.floor((p[j + 1]! - minY) * inv)
    let iz = Math.floor((p[j + 2]! - minZ) * inv)
    if (ix > lastX) ix = lastX
    if (iy > lastY) iy = lastY
    if (iz > lastZ) iz = lastZ
    out[i] = ix + nx * (iy + ny * iz)
  }
}

function clampCell(c: number, n: number): number {
  return c < 0 ? 0 : c >= n ? n - 1 : c
}

/** Smallest cube edge (to 0.1 %) whose grid over extents ex, ey, ez has at most `target` cells. */
function cellEdge(ex: number, ey: number, ez: number, target: number): number {
  const largest = Math.max(ex, ey, ez)
  if (!(largest > 0)) return 1
  const cells = (edge: number): number =>
    Math.max(1, Math.ceil(ex / edge)) * Math.max(1, Math.ceil(ey / edge)) * Math.max(1, Math.ceil(ez / edge))
  let lo = largest / target / 2
  let hi = largest * 1.000001
  while (hi / lo > 1.001) {
    const mid = Math.sqrt(lo * hi)
    if (cells(mid) <= target) hi = mid
    else lo = mid
  }
  return hi
}
