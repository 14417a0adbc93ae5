/**
 * A placement's rigid matrix as the numbers the transform form shows, and back. Column-major 4x4 (element
 * [col * 4 + row]), metres, degrees. The rotation is R = Rz(rz) · Ry(ry) · Rx(rx): turn about X first, then Y,
 * then Z, all about the scene's fixed axes, so rz alone is the heading seen from above (anticlockwise, as
 * shared/geometry/rigidTransform.ts rotationZ). The matrix built here is orthonormal to rounding, well inside the
 * server's 1e-6 rigidity check.
 */
export interface PlacementPose {
  tx: number
  ty: number
  tz: number
  rx: number
  ry: number
  rz: number
}

const RAD = Math.PI / 180

export function matrixOfPose(p: PlacementPose): number[] {
  const [cx, sx] = [Math.cos(p.rx * RAD), Math.sin(p.rx * RAD)]
  const [cy, sy] = [Math.cos(p.ry * RAD), Math.sin(p.ry * RAD)]
  const [cz, sz] = [Math.cos(p.rz * RAD), Math.sin(p.rz * RAD)]
  // Rows of Rz·Ry·Rx.
  const r00 = cz * cy, r01 = cz * sy * sx - sz * cx, r02 = cz * sy * cx + sz * sx
  const r10 = sz * cy, r11 = sz * sy * sx + cz * cx, r12 = sz * sy * cx - cz * sx
  const r20 = -sy, r21 = cy * sx, r22 = cy * cx
  return [r00, r10, r20, 0, r01, r11, r21, 0, r02, r12, r22, 0, p.tx, p.ty, p.tz, 1]
}

/** The angles of a rigid matrix; at ry = ±90° (gimbal lock) rx is taken as 0 and the turn goes to rz. */
export function poseOfMatrix(m: readonly number[]): PlacementPose {
  const r00 = m[0]!, r10 = m[1]!, r20 = m[2]!
  const r01 = m[4]!, r11 = m[5]!, r21 = m[6]!
  const r22 = m[10]!
  const sy = Math.max(-1, Math.min(1, -r20))
  const ry = Math.asin(sy)
  let rx: number
  let rz: number
  if (Math.abs(sy) < 1 - 1e-12) {
    rx = Math.atan2(r21, r22)
    rz = Math.atan2(r10, r00)
  } else {
    rx = 0
    rz = Math.atan2(-r01, r11)
  }
  const clean = (deg: number) => (Math.abs(deg) < 1e-12 ? 0 : deg)
  return { tx: m[12]!, ty: m[13]!, tz: m[14]!, rx: clean(rx / RAD), ry: clean(ry / RAD), rz: clean(rz / RAD) }
}
