// Plane fit by PCA (published: Shakarji 1998, J. Res. NIST 103(6): centroid, covariance / n, normal = eigenvector
// of the smallest eigenvalue, orthogonal RMS residual sqrt(lambda_min)) and the symmetric 3x3 eigen-solver
// (cyclic Jacobi: Golub and Van Loan, Matrix Computations, section 8.5).
import { describe, expect, it } from 'vitest'
import { fitPlane } from '@shared/geometry/planeFit'
import { symmetricEigen3 } from '@shared/geometry/symmetricEigen3'
import { createRandom } from './factories'

/** Rotation matrix (row-major 3x3) about a unit axis by an angle (Rodrigues' formula, published: Rodrigues 1840). */
function rotation(axis: [number, number, number], angle: number): number[][] {
  const [x, y, z] = axis
  const c = Math.cos(angle), s = Math.sin(angle), t = 1 - c
  return [
    [t * x * x + c, t * x * y - s * z, t * x * z + s * y],
    [t * x * y + s * z, t * y * y + c, t * y * z - s * x],
    [t * x * z - s * y, t * y * z + s * x, t * z * z + c],
  ]
}

/** R diag(d) R^T: symmetric, eigenvalues d, eigenvectors the columns of R (derived). */
function rotatedDiagonal(r: number[][], d: number[]): number[][] {
  return [0, 1, 2].map((i) => [0, 1, 2].map((j) => [0, 1, 2].reduce((sum, k) => sum + r[i]![k]! * d[k]! * r[j]![k]!, 0)))
}

const unit = (v: number[]) => v.map((c) => c / Math.hypot(...v)) as [number, number, number]

describe('fitPlane', () => {
  it('worked example: the plane through (0,0,.1), (1,0,-.1), (1,1,.1), (0,1,-.1) has normal (0,0,+-1) and RMS 0.1 (derived)', () => {
    const fit = fitPlane([0, 0, 0.1, 1, 0, -0.1, 1, 1, 0.1, 0, 1, -0.1])!
    expect(fit.centroid[0]).toBeCloseTo(0.5, 15)
    expect(fit.centroid[1]).toBeCloseTo(0.5, 15)
    expect(fit.centroid[2]).toBeCloseTo(0, 15)
    expect(Math.abs(fit.normal[2])).toBeCloseTo(1, 14)
    expect(fit.normal[0]).toBeCloseTo(0, 14)
    expect(fit.normal[1]).toBeCloseTo(0, 14)
    expect(fit.rms).toBeCloseTo(0.1, 14)
    // Residuals are +-0.1 (derived), so the flatness is 0.2.
    expect(fit.flatness).toBeCloseTo(0.2, 14)
    expect(fit.eigenvalues).toEqual([expect.closeTo(0.01, 14), expect.closeTo(0.25, 14), expect.closeTo(0.25, 14)])
  })

  it('recovers a tilted plane far from the origin exactly when the points lie on it (derived)', () => {
    const normal = unit([0.3, -0.2, 1])
    const random = createRandom(2)
    const points: number[] = []
    for (let i = 0; i < 200; i++) {
      const u = random() * 10, v = random() * 10
      // Two in-plane directions orthogonal to the normal.
      const e1 = unit([1, 0, -normal[0] / normal[2]])
      const e2 = [normal[1] * e1[2] - normal[2] * e1[1], normal[2] * e1[0] - normal[0] * e1[2], normal[0] * e1[1] - normal[1] * e1[0]]
      points.push(512_000 + u * e1[0] + v * e2[0]!, 5_400_000 + u * e1[1] + v * e2[1]!, 300 + u * e1[2] + v * e2[2]!)
    }
    const fit = fitPlane(points)!
    fit.normal.forEach((c, a) => expect(c).toBeCloseTo(normal[a]!, 9))
    expect(fit.rms).toBeLessThan(1e-7)
  })

  it('says there is no plane for fewer than three, coincident or collinear points', () => {
    expect(fitPlane([0, 0, 0, 1, 1, 1])).toBeNull()
    expect(fitPlane([2, 2, 2, 2, 2, 2, 2, 2, 2])).toBeNull()
    expect(fitPlane([0, 0, 0, 1, 2, 3, 2, 4, 6, -1, -2, -3])).toBeNull()
  })

  it('turns the normal up (z >= 0)', () => {
    const fit = fitPlane([0, 0, 0, 1, 0, 1, 0, 1, 0, 1, 1, 1])!
    expect(fit.normal[2]).toBeGreaterThan(0)
    fit.normal.forEach((c, a) => expect(c).toBeCloseTo(unit([-1, 0, 1])[a]!, 12))
  })
})

describe('symmetricEigen3', () => {
  it('finds the eigenvalues and eigenvectors of a rotated diagonal matrix', () => {
    const r = rotation(unit([1, 2, 3]), 0.7)
    const a = rotatedDiagonal(r, [5, 1, 2])
    const { values, vectors } = symmetricEigen3(a[0]![0]!, a[0]![1]!, a[0]![2]!, a[1]![1]!, a[1]![2]!, a[2]![2]!)
    expect(Array.from(values)).toEqual([expect.closeTo(1, 13), expect.closeTo(2, 13), expect.closeTo(5, 13)])
    // Column j of the result is +- column (1, 2, 0)[j] of R.
    ;[1, 2, 0].forEach((column, j) => {
      const expected = [r[0]![column]!, r[1]![column]!, r[2]![column]!]
      const got = Array.from(vectors.subarray(3 * j, 3 * j + 3))
      const dot = got.reduce((sum, c, i) => sum + c * expected[i]!, 0)
      expect(Math.abs(dot)).toBeCloseTo(1, 12)
    })
  })

  it('handles a repeated eigenvalue (the vectors still orthonormal, A v = lambda v)', () => {
    const r = rotation(unit([-2, 1, 0.5]), 1.9)
    const a = rotatedDiagonal(r, [3, 3, 1])
    const { values, vectors } = symmetricEigen3(a[0]![0]!, a[0]![1]!, a[0]![2]!, a[1]![1]!, a[1]![2]!, a[2]![2]!)
    expect(Array.from(values)).toEqual([expect.closeTo(1, 13), expect.closeTo(3, 13), expect.closeTo(3, 13)])
    for (let j = 0; j < 3; j++) {
      const v = Array.from(vectors.subarray(3 * j, 3 * j + 3))
      const av = a.map((row) => row.reduce((sum, c, i) => sum + c * v[i]!, 0))
      av.forEach((c, i) => expect(c).toBeCloseTo(values[j]! * v[i]!, 12))
      for (let other = 0; other < 3; other++) {
        const w = Array.from(vectors.subarray(3 * other, 3 * other + 3))
        expect(v.reduce((sum, c, i) => sum + c * w[i]!, 0)).toBeCloseTo(other === j ? 1 : 0, 12)
      }
    }
  })

  it('keeps the trace and determinant of random symmetric matrices (similarity invariants, derived)', () => {
    const random = createRandom(12)
    for (let trial = 0; trial < 200; trial++) {
      const [a00, a01, a02, a11, a12, a22] = Array.from({ length: 6 }, () => random() * 20 - 10) as [number, number, number, number, number, number]
      const { values } = symmetricEigen3(a00, a01, a02, a11, a12, a22)
      const det = a00 * (a11 * a22 - a12 * a12) - a01 * (a01 * a22 - a12 * a02) + a02 * (a01 * a12 - a11 * a02)
      expect(values[0]! + values[1]! + values[2]!).toBeCloseTo(a00 + a11 + a22, 10)
      expect(values[0]! * values[1]! * values[2]!).toBeCloseTo(det, 8)
      expect(values[0]!).toBeLessThanOrEqual(values[1]!)
      expect(values[1]!).toBeLessThanOrEqual(values[2]!)
    }
    expect(Array.from(symmetricEigen3(4, 0, 0, -1, 0, 2).values)).toEqual([-1, 2, 4])
  })
})
