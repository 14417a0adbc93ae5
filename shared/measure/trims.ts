import type { TrimMode, TrimShape } from '../schemas/objects'

/**
 * Trims: which stored points a set of boxes, prisms and "below" half-spaces keeps.
 *
 * Units: metres, one frame for the points and the trims (the placement's own frame on the server), Z up;
 * points interleaved x y z. The rule: a point is kept when it is inside at least one keep trim (or there is
 * no keep trim) and inside no cut trim. Stored points never change: the result is a mask (1 = kept).
 *
 * Shapes and their boundaries (a point exactly on a boundary):
 * - box: centre, full edge lengths along the box's own axes, rotation quaternion [x, y, z, w] (the box's own
 *   axes are the rotation applied to x y z). Closed: a point on a face is inside.
 * - prism: an outline of (u, v) corners in the plane through `origin` with axes u and v, swept along
 *   n = u x v, bounded by near <= (p - origin) . n <= far where given. u is normalised, n = u x v normalised
 *   and v taken as n x u (the schema allows v up to 1e-3 off a right angle; this makes the frame exactly
 *   orthonormal). Inside the outline by the even-odd rule (a self-crossing outline's doubly covered parts
 *   are outside), any orientation, concave allowed. Closed: a point on an edge or a corner of the outline,
 *   or at near or far, is inside.
 * - below: (p - point) . up < 0. Open: a point on the plane is not below (a floor's top points stay).
 * Per-trim constants (rotation matrix, unit axes, the outline's box) are computed once per call, not per point.
 */

export interface TrimLike {
  mode: TrimMode
  shape: TrimShape
}

interface CompiledBox {
  kind: 0
  cx: number
  cy: number
  cz: number
  /** Rows of R^T: the box's own axes in the frame, so local_i = axis_i . (p - c). */
  r: Float64Array
  hx: number
  hy: number
  hz: number
}

interface CompiledPrism {
  kind: 1
  ox: number
  oy: number
  oz: number
  /** u, v, n as unit vectors, 9 numbers. */
  a: Float64Array
  /** Corners u0 v0 u1 v1 ... */
  ring: Float64Array
  umin: number
  umax: number
  vmin: number
  vmax: number
  near: number
  far: number
}

interface CompiledBelow {
  kind: 2
  px: number
  py: number
  pz: number
  ux: number
  uy: number
  uz: number
}

type Compiled = CompiledBox | CompiledPrism | CompiledBelow

function compile(shape: TrimShape): Compiled {
  if (shape.shape === 'box') {
    const [qx, qy, qz, qw0] = shape.rotation
    const qn = Math.hypot(qx, qy, qz, qw0)
    if (!(qn > 0)) throw new RangeError('trim box: rotation must not be the zero quaternion')
    const x = qx / qn, y = qy / qn, z = qz / qn, w = qw0 / qn
    // Columns of the rotation matrix are the box's own axes (the standard unit-quaternion matrix).
    const r = new Float64Array([
      1 - 2 * (y * y + z * z), 2 * (x * y + w * z), 2 * (x * z - w * y),
      2 * (x * y - w * z), 1 - 2 * (x * x + z * z), 2 * (y * z + w * x),
      2 * (x * z + w * y), 2 * (y * z - w * x), 1 - 2 * (x * x + y * y),
    ])
    return { kind: 0, cx: shape.centre[0], cy: shape.centre[1], cz: shape.centre[2], r, hx: shape.size[0] / 2, hy: shape.size[1] / 2, hz: shape.size[2] / 2 }
  }
  if (shape.shape === 'prism') {
    const un = Math.hypot(...shape.u)
    const ux = shape.u[0] / un, uy = shape.u[1] / un, uz = shape.u[2] / un
    const [vx0, vy0, vz0] = shape.v
    let nx = uy * vz0 - uz * vy0, ny = uz * vx0 - ux * vz0, nz = ux * vy0 - uy * vx0
    const nn = Math.hypot(nx, ny, nz)
    if (!(nn > 0)) throw new RangeError('trim prism: u and v must not be parallel or zero')
    nx /= nn
    ny /= nn
    nz /= nn
    const vx = ny * uz - nz * uy, vy = nz * ux - nx * uz, vz = nx * uy - ny * ux
    const ring = new Float64Array(shape.outline.length * 2)
    let umin = Infinity, umax = -Infinity, vmin = Infinity, vmax = -Infinity
    shape.outline.forEach(([a, b], i) => {
      ring[2 * i] = a
      ring[2 * i + 1] = b
      umin = Math.min(umin, a)
      umax = Math.max(umax, a)
      vmin = Math.min(vmin, b)
      vmax = Math.max(vmax, b)
    })
    if (ring.length < 6) throw new RangeError('trim prism: the outline must have at least 3 corners')
    return {
      kind: 1,
      ox: shape.origin[0],
      oy: shape.origin[1],
      oz: shape.origin[2],
      a: new Float64Array([ux, uy, uz, vx, vy, vz, nx, ny, nz]),
      ring,
      umin,
      umax,
      vmin,
      vmax,
      near: shape.near ?? -Infinity,
      far: shape.far ?? Infinity,
    }
  }
  return { kind: 2, px: shape.point[0], py: shape.point[1], pz: shape.point[2], ux: shape.up[0], uy: shape.up[1], uz: shape.up[2] }
}

function insideBox(c: CompiledBox, x: number, y: number, z: number): boolean {
  const dx = x - c.cx, dy = y - c.cy, dz = z - c.cz
  const r = c.r
  return (
    Math.abs(r[0]! * dx + r[1]! * dy + r[2]! * dz) <= c.hx &&
    Math.abs(r[3]! * dx + r[4]! * dy + r[5]! * dz) <= c.hy &&
    Math.abs(r[6]! * dx + r[7]! * dy + r[8]! * dz) <= c.hz
  )
}

/** Even-odd inside (ray towards +u, half-open crossing rule) or exactly on an edge of the closed outline. */
function insideOutline(ring: Float64Array, pu: number, pv: number): boolean {
  const m = ring.length
  let inside = false
  let onEdge = false
  for (let i = 0, j = m - 2; i < m; j = i, i += 2) {
    const ui = ring[i]!, vi = ring[i + 1]!, uj = ring[j]!, vj = ring[j + 1]!
    if (vi > pv !== vj > pv) {
      const cross = (uj - ui) * (pv - vi) - (vj - vi) * (pu - ui)
      // The edge crosses the point's level; the point lies left of the upward edge when cross > 0 (and so on).
      if (cross === 0) return true
      if (vj > vi ? cross > 0 : cross < 0) inside = !inside
    } else if (!onEdge) {
      // An edge that does not straddle the level (horizontal, or ending at it): the point may lie on it.
      const cross = (uj - ui) * (pv - vi) - (vj - vi) * (pu - ui)
      if (cross === 0 && pu >= Math.min(ui, uj) && pu <= Math.max(ui, uj) && pv >= Math.min(vi, vj) && pv <= Math.max(vi, vj)) onEdge = true
    }
  }
  return inside || onEdge
}

function insidePrism(c: CompiledPrism, x: number, y: number, z: number): boolean {
  const dx = x - c.ox, dy = y - c.oy, dz = z - c.oz
  const a = c.a
  const pu = a[0]! * dx + a[1]! * dy + a[2]! * dz
  if (pu < c.umin || pu > c.umax) return false
  const pv = a[3]! * dx + a[4]! * dy + a[5]! * dz
  if (pv < c.vmin || pv > c.vmax) return false
  const pn = a[6]! * dx + a[7]! * dy + a[8]! * dz
  if (pn < c.near || pn > c.far) return false
  return insideOutline(c.ring, pu, pv)
}

function insideBelow(c: CompiledBelow, x: number, y: number, z: number): boolean {
  return (x - c.px) * c.ux + (y - c.py) * c.uy + (z - c.pz) * c.uz < 0
}

function insideCompiled(c: Compiled, x: number, y: number, z: number): boolean {
  return c.kind === 0 ? insideBox(c, x, y, z) : c.kind === 1 ? insidePrism(c, x, y, z) : insideBelow(c, x, y, z)
}

/** Whether the point (x, y, z) is inside the shape (boundaries as in the header). */
export function insideTrim(shape: TrimShape, x: number, y: number, z: number): boolean {
  return insideCompiled(compile(shape), x, y, z)
}

/**
 * The rule as a predicate over single points, constants compiled once: for walks that visit points one at a
 * time (a slab, a nearest-point search) rather than holding them in an array.
 */
export function keepsPoint(trims: readonly TrimLike[]): (x: number, y: number, z: number) => boolean {
  const keeps = trims.filter((t) => t.mode === 'keep').map((t) => compile(t.shape))
  const cuts = trims.filter((t) => t.mode === 'cut').map((t) => compile(t.shape))
  return (x, y, z) => (keeps.length === 0 || keeps.some((c) => insideCompiled(c, x, y, z))) && !cuts.some((c) => insideCompiled(c, x, y, z))
}

/** Sets out[i] = to where out[i] === from and point i is inside c: one tight loop per shape kind. */
function pass(c: Compiled, xyz: Float64Array, out: Uint8Array, from: number, to: number): void {
  const n = out.length
  if (c.kind === 0) {
    for (let i = 0; i < n; i++) if (out[i] === from && insideBox(c, xyz[3 * i]!, xyz[3 * i + 1]!, xyz[3 * i + 2]!)) out[i] = to
  } else if (c.kind === 1) {
    for (let i = 0; i < n; i++) if (out[i] === from && insidePrism(c, xyz[3 * i]!, xyz[3 * i + 1]!, xyz[3 * i + 2]!)) out[i] = to
  } else {
    for (let i = 0; i < n; i++) if (out[i] === from && insideBelow(c, xyz[3 * i]!, xyz[3 * i + 1]!, xyz[3 * i + 2]!)) out[i] = to
  }
}

function pointCount(xyz: Float64Array): number {
  if (xyz.length % 3 !== 0) throw new RangeError(`points must be x y z triples: ${xyz.length} numbers is not a multiple of 3`)
  return xyz.length / 3
}

/**
 * The mask of kept points (1 kept, 0 not) under the rule of the header. `out`, when given, must hold one
 * byte per point and is overwritten.
 */
export function trimMask(xyz: Float64Array, trims: readonly TrimLike[], out?: Uint8Array): Uint8Array {
  const n = pointCount(xyz)
  if (out && out.length !== n) throw new RangeError(`mask must hold one byte per point: ${out.length} bytes for ${n} points`)
  const mask = out ?? new Uint8Array(n)
  const keeps = trims.filter((t) => t.mode === 'keep').map((t) => compile(t.shape))
  const cuts = trims.filter((t) => t.mode === 'cut').map((t) => compile(t.shape))
  mask.fill(keeps.length > 0 ? 0 : 1)
  for (const c of keeps) pass(c, xyz, mask, 0, 1)
  for (const c of cuts) pass(c, xyz, mask, 1, 0)
  return mask
}

/** How many points are stored, kept and not kept (cut = stored - kept) by the trims. */
export function trimCounts(xyz: Float64Array, trims: readonly TrimLike[]): { stored: number; kept: number; cut: number } {
  const mask = trimMask(xyz, trims)
  let kept = 0
  for (let i = 0; i < mask.length; i++) kept += mask[i]!
  return { stored: mask.length, kept, cut: mask.length - kept }
}

function checkMask(xyz: Float64Array, mask: Uint8Array): number {
  const n = pointCount(xyz)
  if (mask.length !== n) throw new RangeError(`mask must hold one byte per point: ${mask.length} bytes for ${n} points`)
  let kept = 0
  for (let i = 0; i < n; i++) if (mask[i] !== 0) kept++
  return kept
}

/** The indices of the kept points (mask non-zero), in order. */
export function keptIndices(xyz: Float64Array, mask: Uint8Array): Uint32Array {
  const out = new Uint32Array(checkMask(xyz, mask))
  for (let i = 0, k = 0; i < mask.length; i++) if (mask[i] !== 0) out[k++] = i
  return out
}

/** The kept points (mask non-zero), x y z interleaved, in order. */
export function keptPoints(xyz: Float64Array, mask: Uint8Array): Float64Array {
  const out = new Float64Array(3 * checkMask(xyz, mask))
  for (let i = 0, k = 0; i < mask.length; i++) {
    if (mask[i] === 0) continue
    out[k++] = xyz[3 * i]!
    out[k++] = xyz[3 * i + 1]!
    out[k++] = xyz[3 * i + 2]!
  }
  return out
}
