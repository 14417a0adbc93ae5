import { EigenvalueDecomposition, Matrix, SingularValueDecomposition } from 'ml-matrix'
import { rigidProblem, type Matrix4 } from '../geometry/rigidTransform'
import { symmetricEigen3, type SymmetricEigen3 } from '../geometry/symmetricEigen3'

/**
 * Closed-form registration from tie-point pairs: the rigid transform that maps the moving placement's
 * points onto the held placement's in the least-squares sense (Horn 1987, JOSA A 4(4); Arun, Huang and Blostein 1987).
 *
 * Frames and units: both points of a pair are in the scene frame, metres, Z up. The result's `matrix` is
 * column-major (shared/geometry/rigidTransform.ts) and maps moving -> held: held ~ R moving + t. To move the
 * moving placement, pre-multiply its matrix by this one. Angles at this edge are degrees.
 *
 * Methods (both exported, both give the same R to rounding on any non-degenerate set):
 * - `svd` (the default): Arun, Huang and Blostein 1987 (IEEE TPAMI 9(5)) / Kabsch 1976: H = sum of
 *   m_c h_c^T over centred pairs, H = U S V^T, R = V D U^T with D = diag(1, 1, sign det(V U^T)), the
 *   reflection guard of Umeyama 1991 (IEEE TPAMI 13(4)). Default because it is the common route (Kabsch-Umeyama), and the 3x3 SVD with the guard is the form the independent test rebuilds step by step.
 * - `horn`: Horn 1987 (JOSA A 4(4)): the unit quaternion is the eigenvector of the largest eigenvalue of
 *   the symmetric 4x4 matrix N built from H; a quaternion is always a proper rotation, so it needs no guard.
 * Translation from the centroids for both: t = c_held - R c_moving.
 *
 * Pairs: `enabled: false` pairs are ignored altogether (not listed in the result). `checkPoint: true` pairs
 * are held out of the fit; their residuals under the fitted transform are listed and summarised apart
 * (checkRms, checkMax), since the fit's own RMS shows consistency only and accuracy needs held-out points
 * (ASPRS Positional Accuracy Standards, Ed. 2, 2023). A residual is R m + t - h (where the moved point
 * lands, minus where it should be); RMS = sqrt(mean |residual|^2) over the fitted pairs.
 *
 * Errors: like the rest of shared/measure, nothing throws and nothing is NaN: the fit returns
 * `{ ok: false, reason, pairIndex, side, message }` with a sentence for the person picking the pairs:
 * - 'not-finite': a coordinate of an enabled pair (fit or check) is not a finite number; pairIndex names it.
 * - 'too-few-pairs': fewer than 3 enabled fit pairs (check points do not count).
 * - 'coincident': on one side the fit points do not span even a line because two or more of them are the
 *   same point (within 1 um); pairIndex names a duplicate (the later one) and `otherIndex` its twin.
 * - 'collinear': on one side the fit points lie on one line (their spread off the best line is below 1e-6 of
 *   their spread along it, or below 1 um): the rotation about that line is not determined. Checked on the
 *   moving and the held side apart, since a mis-picked pair can make either side degenerate.
 */

export type Vec3 = [number, number, number]
export type FitMethod = 'svd' | 'horn'

export interface TiePair {
  /** The point on the placement that moves, scene frame, metres. */
  moving: ArrayLike<number>
  /** The matching point on the placement that stays, scene frame, metres. */
  held: ArrayLike<number>
  /** Held out of the fit; its residual is reported apart. */
  checkPoint?: boolean
  /** false: ignored altogether (default true). */
  enabled?: boolean
}

export interface PairResidual {
  /** Index into the input array. */
  index: number
  /** R m + t - h, metres. */
  residual: Vec3
  distance: number
  checkPoint: boolean
}

export interface RigidFit {
  ok: true
  method: FitMethod
  /** Column-major 4x4, maps moving -> held. */
  matrix: number[]
  /** The rotation as a unit quaternion [w, x, y, z], w >= 0. */
  quaternion: [number, number, number, number]
  /** The total rotation angle, degrees, 0..180. */
  rotationDegrees: number
  translation: Vec3
  /** Every enabled pair, fit and check, in input order. */
  pairs: PairResidual[]
  /** Over the fitted pairs, metres. */
  rms: number
  max: number
  count: number
  /** Over the check points; null when there are none. */
  checkRms: number | null
  checkMax: number | null
  checkCount: number
}

export type FitProblemReason = 'not-finite' | 'too-few-pairs' | 'coincident' | 'collinear'

export interface FitProblem {
  ok: false
  reason: FitProblemReason
  /** The pair the problem is about (input index), when one is. */
  pairIndex: number | null
  /** For 'coincident': the earlier pair at the same place. */
  otherIndex: number | null
  /** Which side of the pairs is degenerate, when it is one side. */
  side: 'moving' | 'held' | null
  message: string
}

export type RigidFitResult = RigidFit | FitProblem

export const MIN_FIT_PAIRS = 3
/** Points closer than this are the same point (metres): 1 um, far below any picking precision. */
export const COINCIDENT_DISTANCE = 1e-6
/** Spread off the best line over spread along it below which the points count as collinear. */
export const COLLINEAR_RATIO = 1e-6

/** The rigid transform taking `moving` onto `held` over the enabled, non-check pairs. */
export function fitRigid(pairs: readonly TiePair[], method: FitMethod = 'svd'): RigidFitResult {
  const problem = inputProblem(pairs)
  if (problem) return problem
  const fit = fitIndices(pairs)
  if (fit.length < MIN_FIT_PAIRS) {
    return fail('too-few-pairs', null, null, null, `${fit.length} enabled fit pair${fit.length === 1 ? '' : 's'}: at least ${MIN_FIT_PAIRS} are needed (check points do not count)`)
  }
  const cm = centroid(pairs, fit, 'moving')
  const ch = centroid(pairs, fit, 'held')
  const degenerate = spreadProblem(pairs, fit, 'moving', cm) ?? spreadProblem(pairs, fit, 'held', ch)
  if (degenerate) return degenerate
  const h = crossCovariance(pairs, fit, cm, ch)
  const rotation = method === 'horn' ? hornRotation(h) : svdRotation(h)
  const t: Vec3 = [
    ch[0] - (rotation[0]! * cm[0] + rotation[1]! * cm[1] + rotation[2]! * cm[2]),
    ch[1] - (rotation[3]! * cm[0] + rotation[4]! * cm[1] + rotation[5]! * cm[2]),
    ch[2] - (rotation[6]! * cm[0] + rotation[7]! * cm[1] + rotation[8]! * cm[2]),
  ]
  return summarise(pairs, method, rotation, t)
}

/** Horn's quaternion method (Horn 1987). */
export function fitRigidHorn(pairs: readonly TiePair[]): RigidFitResult {
  return fitRigid(pairs, 'horn')
}

/** The SVD method with Umeyama's reflection guard (Arun et al. 1987, Kabsch 1976, Umeyama 1991). */
export function fitRigidSvd(pairs: readonly TiePair[]): RigidFitResult {
  return fitRigid(pairs, 'svd')
}

// ---------------------------------------------------------------------------------------------------------
// Rotations. `Rot3` is a row-major 3x3 here (r[3 * row + col]), turned column-major only in `summarise`.

type Rot3 = number[]

/**
 * R = V D U^T from H = U S V^T (H = sum m h^T), D = diag(1, 1, d), d = sign det(V U^T). With d = -1 the
 * least-squares orthogonal matrix would mirror (coplanar or very noisy pairs); flipping the column of the
 * smallest singular value gives the best proper rotation (Umeyama 1991). ml-matrix sorts the singular
 * values in descending order, so that is column 2.
 */
function svdRotation(h: Matrix): Rot3 {
  const svd = new SingularValueDecomposition(h, { autoTranspose: false })
  const u = svd.leftSingularVectors
  const v = svd.rightSingularVectors
  const d = Math.sign(det3(v.mmul(u.transpose()))) || 1
  const r: Rot3 = new Array<number>(9)
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      r[3 * i + j] = v.get(i, 0) * u.get(j, 0) + v.get(i, 1) * u.get(j, 1) + d * v.get(i, 2) * u.get(j, 2)
    }
  }
  return r
}

/**
 * Horn's N matrix from S = H (S_ab = sum m_a h_b over centred pairs), his eq. in section 4 of the 1987
 * paper; the eigenvector of its largest eigenvalue is the quaternion rotating moving onto held.
 */
function hornRotation(h: Matrix): Rot3 {
  const s = (a: number, b: number) => h.get(a, b)
  const sxx = s(0, 0), sxy = s(0, 1), sxz = s(0, 2)
  const syx = s(1, 0), syy = s(1, 1), syz = s(1, 2)
  const szx = s(2, 0), szy = s(2, 1), szz = s(2, 2)
  const n = new Matrix([
    [sxx + syy + szz, syz - szy, szx - sxz, sxy - syx],
    [syz - szy, sxx - syy - szz, sxy + syx, szx + sxz],
    [szx - sxz, sxy + syx, -sxx + syy - szz, syz + szy],
    [sxy - syx, szx + sxz, syz + szy, -sxx - syy + szz],
  ])
  const evd = new EigenvalueDecomposition(n, { assumeSymmetric: true })
  const values = evd.realEigenvalues
  let best = 0
  for (let i = 1; i < 4; i++) if (values[i]! > values[best]!) best = i
  const vectors = evd.eigenvectorMatrix
  return quaternionToRotation([vectors.get(0, best), vectors.get(1, best), vectors.get(2, best), vectors.get(3, best)])
}

/** Row-major rotation of a quaternion [w, x, y, z] (normalised here). */
function quaternionToRotation(q: readonly number[]): Rot3 {
  const len = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!)
  const w = q[0]! / len, x = q[1]! / len, y = q[2]! / len, z = q[3]! / len
  return [
    1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y),
    2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x),
    2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y),
  ]
}

/**
 * The unit quaternion [w, x, y, z] (w >= 0) of a row-major rotation, by Shepperd's rule (Shepperd 1978,
 * J. Guidance and Control 1(3)): divide by the largest of the four candidates, so it never divides by a
 * number near zero.
 */
export function rotationToQuaternion(r: ArrayLike<number>): [number, number, number, number] {
  const m00 = r[0]!, m01 = r[1]!, m02 = r[2]!, m10 = r[3]!, m11 = r[4]!, m12 = r[5]!, m20 = r[6]!, m21 = r[7]!, m22 = r[8]!
  const trace = m00 + m11 + m22
  let q: [number, number, number, number]
  if (trace >= m00 && trace >= m11 && trace >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + trace))
    q = [s / 4, (m21 - m12) / s, (m02 - m20) / s, (m10 - m01) / s]
  } else if (m00 >= m11 && m00 >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m00 - m11 - m22))
    q = [(m21 - m12) / s, s / 4, (m01 + m10) / s, (m02 + m20) / s]
  } else if (m11 >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m11 - m00 - m22))
    q = [(m02 - m20) / s, (m01 + m10) / s, s / 4, (m12 + m21) / s]
  } else {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m22 - m00 - m11))
    q = [(m10 - m01) / s, (m02 + m20) / s, (m12 + m21) / s, s / 4]
  }
  const len = Math.hypot(...q)
  const sign = q[0] < 0 ? -1 : 1
  return q.map((c) => (sign * c) / len + 0) as [number, number, number, number]
}

function det3(m: Matrix): number {
  const a = (i: number, j: number) => m.get(i, j)
  return (
    a(0, 0) * (a(1, 1) * a(2, 2) - a(1, 2) * a(2, 1)) -
    a(0, 1) * (a(1, 0) * a(2, 2) - a(1, 2) * a(2, 0)) +
    a(0, 2) * (a(1, 0) * a(2, 1) - a(1, 1) * a(2, 0))
  )
}

// ---------------------------------------------------------------------------------------------------------
// Input checks and sums.

function fail(reason: FitProblemReason, pairIndex: number | null, otherIndex: number | null, side: FitProblem['side'], message: string): FitProblem {
  return { ok: false, reason, pairIndex, otherIndex, side, message }
}

const isEnabled = (pair: TiePair) => pair.enabled !== false

/** The first enabled pair with a coordinate that is missing or not finite. */
function inputProblem(pairs: readonly TiePair[]): FitProblem | null {
  for (let i = 0; i < pairs.length; i++) {
    const pair = pairs[i]!
    if (!isEnabled(pair)) continue
    for (const side of ['moving', 'held'] as const) {
      const p = pair[side]
      for (let a = 0; a < 3; a++) {
        if (!Number.isFinite(p?.[a])) return fail('not-finite', i, null, side, `pair ${i}: the ${side} point's ${'xyz'[a]} is not a finite number`)
      }
    }
  }
  return null
}

function fitIndices(pairs: readonly TiePair[]): number[] {
  const out: number[] = []
  pairs.forEach((pair, i) => {
    if (isEnabled(pair) && pair.checkPoint !== true) out.push(i)
  })
  return out
}

function centroid(pairs: readonly TiePair[], fit: readonly number[], side: 'moving' | 'held'): Vec3 {
  const c: Vec3 = [0, 0, 0]
  for (const i of fit) for (let a = 0; a < 3; a++) c[a]! += pairs[i]![side][a]!
  return [c[0] / fit.length, c[1] / fit.length, c[2] / fit.length]
}

/** H = sum over fit pairs of (m - cm)(h - ch)^T, centred so that far-off scene coordinates lose nothing. */
function crossCovariance(pairs: readonly TiePair[], fit: readonly number[], cm: Vec3, ch: Vec3): Matrix {
  const h = Matrix.zeros(3, 3)
  for (const i of fit) {
    const m = pairs[i]!.moving, p = pairs[i]!.held
    for (let a = 0; a < 3; a++) {
      const ma = m[a]! - cm[a]!
      for (let b = 0; b < 3; b++) h.set(a, b, h.get(a, b) + ma * (p[b]! - ch[b]!))
    }
  }
  return h
}

const eigenScratch: SymmetricEigen3 = { values: new Float64Array(3), vectors: new Float64Array(9) }

/**
 * Whether one side's fit points span a plane: the two larger eigenvalues of their scatter (variances along
 * the principal axes, via the project's Jacobi solver) must both be clear of zero.
 */
function spreadProblem(pairs: readonly TiePair[], fit: readonly number[], side: 'moving' | 'held', c: Vec3): FitProblem | null {
  let xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0
  for (const i of fit) {
    const p = pairs[i]![side]
    const dx = p[0]! - c[0], dy = p[1]! - c[1], dz = p[2]! - c[2]
    xx += dx * dx; xy += dx * dy; xz += dx * dz
    yy += dy * dy; yz += dy * dz; zz += dz * dz
  }
  const n = fit.length
  const e = symmetricEigen3(xx / n, xy / n, xz / n, yy / n, yz / n, zz / n, eigenScratch)
  const along = Math.sqrt(Math.max(0, e.values[2]!))
  const off = Math.sqrt(Math.max(0, e.values[1]!))
  if (off > COINCIDENT_DISTANCE && off > COLLINEAR_RATIO * along) return null
  const twin = firstDuplicate(pairs, fit, side)
  if (twin && (along <= COINCIDENT_DISTANCE || distinctCount(pairs, fit, side) < MIN_FIT_PAIRS)) {
    return fail('coincident', twin[1], twin[0], side, `pairs ${twin[0]} and ${twin[1]} have the same ${side} point: pick a third, distinct point off the line`)
  }
  const list = fit.join(', ')
  return fail('collinear', null, null, side, `the ${side} points of pairs ${list} lie on one line, so the rotation about it is unknown: add a pair off that line`)
}

/** The first two fit pairs whose `side` points are within COINCIDENT_DISTANCE (only run on degenerate sets). */
function firstDuplicate(pairs: readonly TiePair[], fit: readonly number[], side: 'moving' | 'held'): [number, number] | null {
  for (let b = 1; b < fit.length; b++) {
    for (let a = 0; a < b; a++) {
      const p = pairs[fit[a]!]![side], q = pairs[fit[b]!]![side]
      if (Math.hypot(p[0]! - q[0]!, p[1]! - q[1]!, p[2]! - q[2]!) <= COINCIDENT_DISTANCE) return [fit[a]!, fit[b]!]
    }
  }
  return null
}

function distinctCount(pairs: readonly TiePair[], fit: readonly number[], side: 'moving' | 'held'): number {
  let count = 0
  for (let b = 0; b < fit.length; b++) {
    let seen = false
    for (let a = 0; a < b && !seen; a++) {
      const p = pairs[fit[a]!]![side], q = pairs[fit[b]!]![side]
      seen = Math.hypot(p[0]! - q[0]!, p[1]! - q[1]!, p[2]! - q[2]!) <= COINCIDENT_DISTANCE
    }
    if (!seen) count++
  }
  return count
}

/** Residuals of every enabled pair under (R, t), the summaries, and the matrix in the project's layout. */
function summarise(pairs: readonly TiePair[], method: FitMethod, r: Rot3, t: Vec3): RigidFit {
  const out: PairResidual[] = []
  let fitSum = 0, fitMax = 0, fitCount = 0, checkSum = 0, checkMax = 0, checkCount = 0
  pairs.forEach((pair, index) => {
    if (!isEnabled(pair)) return
    const m = pair.moving, h = pair.held
    const residual: Vec3 = [0, 0, 0]
    for (let a = 0; a < 3; a++) residual[a] = r[3 * a]! * m[0]! + r[3 * a + 1]! * m[1]! + r[3 * a + 2]! * m[2]! + t[a]! - h[a]!
    const distance = Math.hypot(...residual)
    const checkPoint = pair.checkPoint === true
    out.push({ index, residual, distance, checkPoint })
    if (checkPoint) {
      checkSum += distance * distance
      checkMax = Math.max(checkMax, distance)
      checkCount++
    } else {
      fitSum += distance * distance
      fitMax = Math.max(fitMax, distance)
      fitCount++
    }
  })
  const quaternion = rotationToQuaternion(r)
  return {
    ok: true,
    method,
    matrix: [r[0]!, r[3]!, r[6]!, 0, r[1]!, r[4]!, r[7]!, 0, r[2]!, r[5]!, r[8]!, 0, t[0], t[1], t[2], 1],
    quaternion,
    rotationDegrees: quaternionAngleDegrees(quaternion),
    translation: t,
    pairs: out,
    rms: Math.sqrt(fitSum / fitCount),
    max: fitMax,
    count: fitCount,
    checkRms: checkCount > 0 ? Math.sqrt(checkSum / checkCount) : null,
    checkMax: checkCount > 0 ? checkMax : null,
    checkCount,
  }
}

/** 2 atan2(|v|, w): stable for small and for near-180-degree rotations, unlike 2 acos(w). */
function quaternionAngleDegrees(q: readonly number[]): number {
  return (2 * Math.atan2(Math.hypot(q[1]!, q[2]!, q[3]!), Math.abs(q[0]!)) * 180) / Math.PI
}

// ---------------------------------------------------------------------------------------------------------
// Describing a transform for the registration report.

/**
 * A rigid transform as a translation and three rotation angles, for people to read.
 *
 * Convention: R = Rz(z) Ry(y) Rx(x): rotate about the scene's X axis by x first, then about the (fixed)
 * scene Y by y, then about the scene Z by z; each angle anticlockwise looking down the axis towards the
 * origin (right-hand rule), degrees. So z is the heading change seen from above, and x, y are the tilts.
 * Ranges: x and z in (-180, 180], y in [-90, 90]. At y = +-90 (gimbal lock) only x - z or x + z is
 * determined; x is then reported as 0 and the whole turn goes to z. The translation is the matrix's last
 * column: where the moving frame's origin lands.
 */
export interface TransformDescription {
  translation: Vec3
  rotationDegrees: { x: number; y: number; z: number }
}

const DEG = 180 / Math.PI
const GIMBAL = 1e-12

/** Translation and X-then-Y-then-Z angles of a rigid matrix; null when `rigidProblem` rejects it. */
export function describeTransform(matrix: Matrix4): TransformDescription | null {
  if (rigidProblem(matrix) !== null) return null
  // Column-major: R[row][col] = m[4 * col + row].
  const r = (row: number, col: number) => matrix[4 * col + row]!
  const cy = Math.hypot(r(0, 0), r(1, 0))
  let x: number, z: number
  const y = Math.atan2(-r(2, 0), cy)
  if (cy > GIMBAL) {
    x = Math.atan2(r(2, 1), r(2, 2))
    z = Math.atan2(r(1, 0), r(0, 0))
  } else {
    x = 0
    z = Math.atan2(-r(0, 1), r(1, 1))
  }
  return {
    translation: [matrix[12]!, matrix[13]!, matrix[14]!],
    rotationDegrees: { x: x * DEG + 0, y: y * DEG + 0, z: z * DEG + 0 },
  }
}

/** The inverse of `describeTransform`: the column-major matrix of a translation and X-then-Y-then-Z angles. */
export function composeTransform(description: TransformDescription): number[] {
  const { x, y, z } = description.rotationDegrees
  const [sx, cx] = sinCos(x), [sy, cy] = sinCos(y), [sz, cz] = sinCos(z)
  const t = description.translation
  // Rz Ry Rx written out, column by column.
  return [
    cz * cy, sz * cy, -sy, 0,
    cz * sy * sx - sz * cx, sz * sy * sx + cz * cx, cy * sx, 0,
    cz * sy * cx + sz * sx, sz * sy * cx - cz * sx, cy * cx, 0,
    t[0], t[1], t[2], 1,
  ]
}

function sinCos(degrees: number): [number, number] {
  const a = degrees / DEG
  return [Math.sin(a), Math.cos(a)]
}
