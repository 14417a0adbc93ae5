/**
 * Section slab: the points within |n . (p - p0)| <= t/2 of a plane, projected to the plane's 2D frame.
 *
 * Units: metres, project frame, Z up; points interleaved x y z. The normal need not be unit length (it is
 * normalised here). In-plane frame (u, v, n) is right-handed (u x v = n): seen from the side n points to,
 * u runs to the right and v up.
 * - wall-like planes (|n_z| < sqrt(1/2), tilted more than 45 degrees from horizontal): v is +Z projected
 *   onto the plane, normalised (exactly +Z for a vertical plane), u = v x n;
 * - floor-like planes (|n_z| >= sqrt(1/2)): v is +Y projected onto the plane, u = v x n (for n = +Z this is
 *   the plan view, u = +X, v = +Y).
 * The 2D coordinates are (u . (p - p0), v . (p - p0)), so p0 is the 2D origin.
 * Degenerate input: a zero or non-finite normal, a non-positive or non-finite thickness, and an empty
 * slab give { ok: false } with a reason.
 */

export interface SlabFrame {
  origin: [number, number, number]
  u: [number, number, number]
  v: [number, number, number]
  n: [number, number, number]
}

export type Slab =
  | {
      ok: true
      count: number
      /** Indices of the kept points in the input. */
      indices: Uint32Array
      /** u v pairs, metres. */
      uv: Float64Array
      extents: { uMin: number; uMax: number; vMin: number; vMax: number }
      frame: SlabFrame
    }
  | { ok: false; reason: 'zero-normal' | 'invalid-thickness' | 'empty' }

const WALL_LIMIT = Math.SQRT1_2

/** The right-handed in-plane frame for a normal, or null for a zero / non-finite normal. */
export function planeFrame(origin: ArrayLike<number>, normal: ArrayLike<number>): SlabFrame | null {
  const len = Math.hypot(normal[0]!, normal[1]!, normal[2]!)
  if (!(Number.isFinite(len) && len > 1e-12)) return null
  const nx = normal[0]! / len, ny = normal[1]! / len, nz = normal[2]! / len
  // Reference "up" in the plane: Z for walls, Y for floors; remove its normal part.
  const wall = Math.abs(nz) < WALL_LIMIT
  const rx = 0, ry = wall ? 0 : 1, rz = wall ? 1 : 0
  const d = rx * nx + ry * ny + rz * nz
  let vx = rx - d * nx, vy = ry - d * ny, vz = rz - d * nz
  const vl = Math.hypot(vx, vy, vz)
  vx /= vl
  vy /= vl
  vz /= vl
  const ux = vy * nz - vz * ny, uy = vz * nx - vx * nz, uz = vx * ny - vy * nx
  return {
    origin: [origin[0]!, origin[1]!, origin[2]!],
    u: [ux, uy, uz],
    v: [vx, vy, vz],
    n: [nx, ny, nz],
  }
}

export function selectSlab(
  points: ArrayLike<number>,
  origin: ArrayLike<number>,
  normal: ArrayLike<number>,
  thickness: number,
): Slab {
  const frame = planeFrame(origin, normal)
  if (frame === null) return { ok: false, reason: 'zero-normal' }
  if (!(Number.isFinite(thickness) && thickness > 0)) return { ok: false, reason: 'invalid-thickness' }
  const [ox, oy, oz] = frame.origin, [nx, ny, nz] = frame.n, [ux, uy, uz] = frame.u, [vx, vy, vz] = frame.v
  const half = thickness / 2
  const count = Math.floor(points.length / 3)
  const kept: number[] = []
  for (let i = 0; i < count; i++) {
    const dx = points[3 * i]! - ox, dy = points[3 * i + 1]! - oy, dz = points[3 * i + 2]! - oz
    if (Math.abs(nx * dx + ny * dy + nz * dz) <= half) kept.push(i)
  }
  if (kept.length === 0) return { ok: false, reason: 'empty' }
  const indices = Uint32Array.from(kept)
  const uv = new Float64Array(2 * kept.length)
  let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
  for (let k = 0; k < kept.length; k++) {
    const i = kept[k]!
    const dx = points[3 * i]! - ox, dy = points[3 * i + 1]! - oy, dz = points[3 * i + 2]! - oz
    const pu = ux * dx + uy * dy + uz * dz, pv = vx * dx + vy * dy + vz * dz
    uv[2 * k] = pu
    uv[2 * k + 1] = pv
    if (pu < uMin) uMin = pu
    if (pu > uMax) uMax = pu
    if (pv < vMin) vMin = pv
    if (pv > vMax) vMax = pv
  }
  return { ok: true, count: kept.length, indices, uv, extents: { uMin, uMax, vMin, vMax }, frame }
}
