import { symmetricEigen3, type SymmetricEigen3 } from './symmetricEigen3'

/**
 * Least-squares plane through points by principal components (Shakarji 1998, J. Res. NIST 103(6)): the
 * plane passes through the centroid, its normal is the eigenvector of the smallest eigenvalue of the 3x3
 * covariance (divided by n), and the orthogonal RMS residual is sqrt(lambda_min).
 *
 * Units: whatever the coordinates are in (metres in Spanmark). Input: x y z interleaved. The normal is a unit
 * vector turned to point up (z >= 0; for a vertical plane y >= 0, then x >= 0), Z being up in every frame.
 * Degenerate input: fewer than 3 points, or points that do not span a plane (all coincident, or collinear
 * to within 1e-12 of the largest variance), give null: there is no unique plane to report.
 */

export interface PlaneFit {
  count: number
  centroid: [number, number, number]
  normal: [number, number, number]
  /** Orthogonal RMS residual, sqrt(lambda_min). */
  rms: number
  /** Largest minus smallest signed residual. */
  flatness: number
  /** Covariance eigenvalues, ascending. */
  eigenvalues: [number, number, number]
}

const COLLINEAR_RATIO = 1e-12
const scratch: SymmetricEigen3 = { values: new Float64Array(3), vectors: new Float64Array(9) }

export function fitPlane(points: ArrayLike<number>, count = Math.floor(points.length / 3)): PlaneFit | null {
  if (count < 3 || points.length < count * 3) return null
  let cx = 0, cy = 0, cz = 0
  for (let i = 0; i < count * 3; i += 3) {
    cx += points[i]!
    cy += points[i + 1]!
    cz += points[i + 2]!
  }
  cx /= count
  cy /= count
  cz /= count
  // Second pass about the centroid: stable for coordinates far from the origin.
  let xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0
  for (let i = 0; i < count * 3; i += 3) {
    const dx = points[i]! - cx, dy = points[i + 1]! - cy, dz = points[i + 2]! - cz
    xx += dx * dx; xy += dx * dy; xz += dx * dz
    yy += dy * dy; yz += dy * dz; zz += dz * dz
  }
  const eigen = symmetricEigen3(xx / count, xy / count, xz / count, yy / count, yz / count, zz / count, scratch)
  const l0 = Math.max(eigen.values[0]!, 0), l1 = eigen.values[1]!, l2 = eigen.values[2]!
  if (!(l2 > 0) || l1 <= l2 * COLLINEAR_RATIO) return null
  let nx = eigen.vectors[0]!, ny = eigen.vectors[1]!, nz = eigen.vectors[2]!
  const length = Math.hypot(nx, ny, nz)
  nx /= length
  ny /= length
  nz /= length
  if (nz < 0 || (nz === 0 && (ny < 0 || (ny === 0 && nx < 0)))) {
    nx = -nx
    ny = -ny
    nz = -nz
  }
  let low = Infinity, high = -Infinity
  for (let i = 0; i < count * 3; i += 3) {
    const r = (points[i]! - cx) * nx + (points[i + 1]! - cy) * ny + (points[i + 2]! - cz) * nz
    if (r < low) low = r
    if (r > high) high = r
  }
  return {
    count,
    centroid: [cx, cy, cz],
    normal: [nx + 0, ny + 0, nz + 0],
    rms: Math.sqrt(l0),
    flatness: high - low,
    eigenvalues: [l0, l1, l2],
  }
}
