/**
 * Eigenvalues and eigenvectors of a real symmetric 3x3 matrix by cyclic Jacobi rotations (Jacobi 1846;
 * the method as in Golub and Van Loan, Matrix Computations, section 8.5). Each rotation zeroes one
 * off-diagonal entry; sweeps repeat until the off-diagonal part is negligible against the matrix's norm.
 * Robust for repeated eigenvalues, where closed-form cubic solutions lose accuracy.
 *
 * Input: the six distinct entries a00 a01 a02 a11 a12 a22. Output: eigenvalues in ascending order and the
 * matching unit eigenvectors as the columns of a column-major 3x3 matrix: vectors[3 * j + i] is component i
 * of eigenvector j (the project's convention, as three.js keeps matrices).
 */

export interface SymmetricEigen3 {
  /** Ascending. */
  values: Float64Array
  /** Column-major; column j is the unit eigenvector of values[j]. */
  vectors: Float64Array
}

const MAX_SWEEPS = 50
const PAIRS = [0, 1, 0, 2, 1, 2] as const

// Scratch for the hot loop (plane fits over thousands of neighbourhoods).
const m = new Float64Array(9)
const v = new Float64Array(9)

export function symmetricEigen3(
  a00: number,
  a01: number,
  a02: number,
  a11: number,
  a12: number,
  a22: number,
  out: SymmetricEigen3 = { values: new Float64Array(3), vectors: new Float64Array(9) },
): SymmetricEigen3 {
  // Row-major working copy (symmetric, so the order does not matter) and V = I.
  m[0] = a00; m[1] = a01; m[2] = a02
  m[3] = a01; m[4] = a11; m[5] = a12
  m[6] = a02; m[7] = a12; m[8] = a22
  v.fill(0)
  v[0] = v[4] = v[8] = 1
  const norm2 = a00 * a00 + a11 * a11 + a22 * a22 + 2 * (a01 * a01 + a02 * a02 + a12 * a12)
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    const off2 = m[1]! * m[1]! + m[2]! * m[2]! + m[5]! * m[5]!
    if (off2 === 0 || off2 <= norm2 * 1e-32) break
    for (let pair = 0; pair < 6; pair += 2) rotate(PAIRS[pair]!, PAIRS[pair + 1]!)
  }
  sortInto(out)
  return out
}

/** One Jacobi rotation in the (p, q) plane: M <- J^T M J, V <- V J, chosen so that M[p][q] becomes 0. */
function rotate(p: number, q: number): void {
  const apq = m[3 * p + q]!
  if (apq === 0) return
  const theta = (m[3 * q + q]! - m[3 * p + p]!) / (2 * apq)
  // The smaller root of t^2 + 2 theta t - 1 = 0 (|rotation| <= 45 degrees), safe for huge theta.
  const t = Number.isFinite(theta * theta)
    ? Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1))
    : 1 / (2 * theta)
  const c = 1 / Math.sqrt(t * t + 1)
  const s = t * c
  for (let k = 0; k < 3; k++) {
    const mkp = m[3 * k + p]!, mkq = m[3 * k + q]!
    m[3 * k + p] = c * mkp - s * mkq
    m[3 * k + q] = s * mkp + c * mkq
  }
  for (let k = 0; k < 3; k++) {
    const mpk = m[3 * p + k]!, mqk = m[3 * q + k]!
    m[3 * p + k] = c * mpk - s * mqk
    m[3 * q + k] = s * mpk + c * mqk
  }
  m[3 * p + q] = 0
  m[3 * q + p] = 0
  // v is row-major here: v[3 * i + j] is component i of vector j.
  for (let k = 0; k < 3; k++) {
    const vkp = v[3 * k + p]!, vkq = v[3 * k + q]!
    v[3 * k + p] = c * vkp - s * vkq
    v[3 * k + q] = s * vkp + c * vkq
  }
}

function sortInto(out: SymmetricEigen3): void {
  const d = [m[0]!, m[4]!, m[8]!]
  const order = [0, 1, 2].sort((a, b) => d[a]! - d[b]!)
  for (let j = 0; j < 3; j++) {
    const src = order[j]!
    out.values[j] = d[src]!
    for (let i = 0; i < 3; i++) out.vectors[3 * j + i] = v[3 * i + src]!
  }
}
