/**
 * Rigid transforms as 4x4 matrices in column-major order, as three.js keeps them (elements[0..3] are the
 * first column). Metres, right-handed, Z up. A rigid matrix has an orthonormal rotation block with
 * determinant +1, any translation, and last row 0 0 0 1: no scale and no shear, so true scale is kept.
 */
export type Matrix4 = readonly number[]

export const IDENTITY: Matrix4 = Object.freeze([1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1])

/** What is wrong with a matrix that should be rigid, or null when it is rigid within `tolerance`. */
export function rigidProblem(m: ArrayLike<number>, tolerance = 1e-6): string | null {
  if (m.length !== 16) return `has ${m.length} numbers, not 16`
  for (let i = 0; i < 16; i++) if (!Number.isFinite(m[i])) return `element ${i} is not a finite number`
  // Row 3 of a column-major matrix is elements 3, 7, 11, 15.
  if (Math.abs(m[3]!) > tolerance || Math.abs(m[7]!) > tolerance || Math.abs(m[11]!) > tolerance || Math.abs(m[15]! - 1) > tolerance) {
    return 'last row is not 0 0 0 1'
  }
  const col = (c: number) => [m[c * 4]!, m[c * 4 + 1]!, m[c * 4 + 2]!]
  const cols = [col(0), col(1), col(2)]
  const dot = (a: number[], b: number[]) => a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!
  for (let i = 0; i < 3; i++) {
    const len = dot(cols[i]!, cols[i]!)
    if (Math.abs(len - 1) > tolerance) return `column ${i} has length ${Math.sqrt(len).toPrecision(8)}: the matrix scales`
    for (let j = i + 1; j < 3; j++) if (Math.abs(dot(cols[i]!, cols[j]!)) > tolerance) return `columns ${i} and ${j} are not perpendicular: the matrix shears`
  }
  const [a, b, c] = cols as [number[], number[], number[]]
  const det = a[0]! * (b[1]! * c[2]! - b[2]! * c[1]!) - b[0]! * (a[1]! * c[2]! - a[2]! * c[1]!) + c[0]! * (a[1]! * b[2]! - a[2]! * b[1]!)
  if (det < 0) return 'determinant is -1: the matrix mirrors'
  return null
}

/** Applies a column-major rigid matrix to a point. */
export function transformPoint(m: Matrix4, x: number, y: number, z: number): [number, number, number] {
  return [m[0]! * x + m[4]! * y + m[8]! * z + m[12]!, m[1]! * x + m[5]! * y + m[9]! * z + m[13]!, m[2]! * x + m[6]! * y + m[10]! * z + m[14]!]
}

/** The inverse of a rigid matrix: the transposed rotation and the rotated, negated translation. */
export function invertRigid(m: Matrix4): number[] {
  const t = [m[12]!, m[13]!, m[14]!]
  const r = [m[0]!, m[4]!, m[8]!, m[1]!, m[5]!, m[9]!, m[2]!, m[6]!, m[10]!]
  return [r[0]!, r[1]!, r[2]!, 0, r[3]!, r[4]!, r[5]!, 0, r[6]!, r[7]!, r[8]!, 0, -(r[0]! * t[0]! + r[3]! * t[1]! + r[6]! * t[2]!), -(r[1]! * t[0]! + r[4]! * t[1]! + r[7]! * t[2]!), -(r[2]! * t[0]! + r[5]! * t[1]! + r[8]! * t[2]!), 1]
}

/** A rotation about +Z by `degrees` (anticlockwise seen from above) followed by a translation. */
export function rotationZ(degrees: number, tx = 0, ty = 0, tz = 0): number[] {
  const a = (degrees * Math.PI) / 180
  const c = Math.cos(a)
  const s = Math.sin(a)
  return [c, s, 0, 0, -s, c, 0, 0, 0, 0, 1, 0, tx, ty, tz, 1]
}

/** The product a b of two column-major 4x4 matrices: apply b first, then a (rigid in, rigid out). */
export function multiplyRigid(a: Matrix4, b: Matrix4): number[] {
  const out = new Array<number>(16)
  for (let col = 0; col < 4; col++) {
    for (let row = 0; row < 4; row++) {
      out[4 * col + row] = a[row]! * b[4 * col]! + a[4 + row]! * b[4 * col + 1]! + a[8 + row]! * b[4 * col + 2]! + a[12 + row]! * b[4 * col + 3]!
    }
  }
  return out
}
