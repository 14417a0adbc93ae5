import type { TrimShape } from '../schemas/objects'
import { type Matrix4, rigidProblem, transformPoint } from './rigidTransform'

/**
 * A trim's shape carried into another frame by a rigid 4x4 matrix (column-major, as three.js keeps it; metres,
 * Z up). The server stores trims in their placement's own frame: scene -> local uses invertRigid(placement),
 * local -> scene the placement's matrix itself. Points transformed by m and the trim transformed by m give the
 * same mask (trims.ts), since a rigid motion keeps distances, sides and the even-odd count.
 *
 * Box: centre transformed, rotation m's rotation composed after the box's own (q' = q_m q). Prism: origin
 * transformed, u and v rotated, the outline (in u v) and near/far (along u x v) unchanged. Below: point
 * transformed, up rotated. Quaternions are normalised with w >= 0 (q and -q are the same rotation).
 */
export function trimToFrame(shape: TrimShape, m: Matrix4): TrimShape {
  const problem = rigidProblem(m)
  if (problem) throw new RangeError(`trim frame: the matrix is not rigid (${problem})`)
  const rotate = (v: readonly [number, number, number]): [number, number, number] => [
    m[0]! * v[0] + m[4]! * v[1] + m[8]! * v[2],
    m[1]! * v[0] + m[5]! * v[1] + m[9]! * v[2],
    m[2]! * v[0] + m[6]! * v[1] + m[10]! * v[2],
  ]
  if (shape.shape === 'box') {
    const [ax, ay, az, aw] = matrixQuaternion(m)
    const [bx, by, bz, bw] = shape.rotation
    // Hamilton product a b (b applied first), as three.js' Quaternion.multiplyQuaternions.
    const q = [ax * bw + aw * bx + ay * bz - az * by, ay * bw + aw * by + az * bx - ax * bz, az * bw + aw * bz + ax * by - ay * bx, aw * bw - ax * bx - ay * by - az * bz]
    const n = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!) * (q[3]! < 0 ? -1 : 1)
    return { ...shape, centre: transformPoint(m, ...shape.centre), size: [...shape.size], rotation: [q[0]! / n, q[1]! / n, q[2]! / n, q[3]! / n] }
  }
  if (shape.shape === 'prism') {
    return { ...shape, origin: transformPoint(m, ...shape.origin), u: rotate(shape.u), v: rotate(shape.v), outline: shape.outline.map(([a, b]) => [a, b]) }
  }
  return { ...shape, point: transformPoint(m, ...shape.point), up: rotate(shape.up) }
}

/**
 * The unit quaternion [x, y, z, w] of a rigid matrix's rotation block (Shepperd's method: the largest of
 * trace, m00, m11, m22 picks the stable formula; the same branches as three.js' setFromRotationMatrix).
 */
export function matrixQuaternion(m: Matrix4): [number, number, number, number] {
  const m11 = m[0]!, m12 = m[4]!, m13 = m[8]!
  const m21 = m[1]!, m22 = m[5]!, m23 = m[9]!
  const m31 = m[2]!, m32 = m[6]!, m33 = m[10]!
  const trace = m11 + m22 + m33
  if (trace > 0) {
    const s = 0.5 / Math.sqrt(trace + 1)
    return [(m32 - m23) * s, (m13 - m31) * s, (m21 - m12) * s, 0.25 / s]
  }
  if (m11 > m22 && m11 > m33) {
    const s = 2 * Math.sqrt(1 + m11 - m22 - m33)
    return [0.25 * s, (m12 + m21) / s, (m13 + m31) / s, (m32 - m23) / s]
  }
  if (m22 > m33) {
    const s = 2 * Math.sqrt(1 + m22 - m11 - m33)
    return [(m12 + m21) / s, 0.25 * s, (m23 + m32) / s, (m13 - m31) / s]
  }
  const s = 2 * Math.sqrt(1 + m33 - m11 - m22)
  return [(m13 + m31) / s, (m23 + m32) / s, 0.25 * s, (m21 - m12) / s]
}
