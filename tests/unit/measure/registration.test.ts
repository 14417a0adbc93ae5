// Closed-form registration from tie-point pairs (shared/measure/registration.ts). Sources beside each check:
// Horn 1987 (JOSA A 4(4)), Arun, Huang and Blostein 1987 (IEEE TPAMI 9(5)), Kabsch 1976, Umeyama 1991
// (IEEE TPAMI 13(4)); reference libraries: ml-matrix (SVD, determinant) and three (Matrix4, Quaternion, Euler).
import { describe, expect, it } from 'vitest'
import { Matrix, SingularValueDecomposition, determinant } from 'ml-matrix'
import { Euler, Matrix4, Quaternion, Vector3 } from 'three'
import { rigidProblem, transformPoint } from '@shared/geometry/rigidTransform'
import {
  composeTransform,
  describeTransform,
  fitRigid,
  fitRigidHorn,
  fitRigidSvd,
  type RigidFit,
  type RigidFitResult,
  type TiePair,
} from '@shared/measure/registration'
import { mulberry32, normal } from './random'

type V = [number, number, number]

function ok(result: RigidFitResult): RigidFit {
  if (!result.ok) throw new Error(`fit failed: ${result.message}`)
  return result
}

/** Row-major 3x3 rotation block of a column-major 4x4. */
const rotationOf = (m: readonly number[]): number[] => [m[0]!, m[4]!, m[8]!, m[1]!, m[5]!, m[9]!, m[2]!, m[6]!, m[10]!]

const det3 = (r: readonly number[]) =>
  r[0]! * (r[4]! * r[8]! - r[5]! * r[7]!) - r[1]! * (r[3]! * r[8]! - r[5]! * r[6]!) + r[2]! * (r[3]! * r[7]! - r[4]! * r[6]!)

const pairsFrom = (moving: V[], m: readonly number[]): TiePair[] => moving.map((p) => ({ moving: p, held: transformPoint(m, ...p) }))

/** A random rotation (uniform axis, angle up to 180 degrees) and translation, as a three.js matrix. */
function randomRigid(rand: () => number): Matrix4 {
  const axis = new Vector3(rand() - 0.5, rand() - 0.5, rand() - 0.5).normalize()
  return new Matrix4().makeRotationAxis(axis, rand() * Math.PI).setPosition(100 * rand() - 50, 100 * rand() - 50, 10 * rand())
}

describe('closed-form registration: worked example', () => {
  // Worked example (numbers derived): unit-cube corners turned 90 degrees about z and moved (1, 2, 3); method published
  // (Horn 1987; Arun et al. 1987), numbers derived: R = [[0,-1,0],[1,0,0],[0,0,1]], t = (1,2,3), RMS 0,
  // quaternion +-(cos 45, 0, 0, sin 45) = +-(0.70711, 0, 0, 0.70711).
  const corners: V[] = []
  for (const x of [0, 1]) for (const y of [0, 1]) for (const z of [0, 1]) corners.push([x, y, z])
  const pairs: TiePair[] = corners.map(([x, y, z]) => ({ moving: [x, y, z], held: [-y + 1, x + 2, z + 3] }))

  for (const method of ['svd', 'horn'] as const) {
    it(`recovers R, t, RMS 0 and the quaternion for the cube (${method}; derived, Horn 1987)`, () => {
      const fit = ok(fitRigid(pairs, method))
      const expectedR = [0, -1, 0, 1, 0, 0, 0, 0, 1]
      rotationOf(fit.matrix).forEach((value, i) => expect(value).toBeCloseTo(expectedR[i]!, 12))
      fit.translation.forEach((value, i) => expect(value).toBeCloseTo([1, 2, 3][i]!, 12))
      expect(fit.matrix.slice(12)).toEqual([expect.closeTo(1, 12), expect.closeTo(2, 12), expect.closeTo(3, 12), 1])
      expect(fit.rms).toBeLessThan(1e-12)
      expect(fit.max).toBeLessThan(1e-12)
      expect(fit.count).toBe(8)
      expect(fit.quaternion[0]).toBeCloseTo(0.70711, 5)
      expect(fit.quaternion[1]).toBeCloseTo(0, 12)
      expect(fit.quaternion[2]).toBeCloseTo(0, 12)
      expect(fit.quaternion[3]).toBeCloseTo(0.70711, 5)
      expect(fit.rotationDegrees).toBeCloseTo(90, 10)
      expect(rigidProblem(fit.matrix, 1e-12)).toBeNull()
      expect(fit.checkRms).toBeNull()
      expect(fit.checkCount).toBe(0)
    })
  }

  it('returns a quaternion that three.js composes into the same matrix (reference library: three)', () => {
    const rand = mulberry32(3)
    const truth = randomRigid(rand)
    const moving: V[] = Array.from({ length: 12 }, () => [rand() * 10, rand() * 10, rand() * 3])
    for (const method of ['svd', 'horn'] as const) {
      const fit = ok(fitRigid(pairsFrom(moving, truth.elements), method))
      const [w, x, y, z] = fit.quaternion
      const composed = new Matrix4().compose(new Vector3(...fit.translation), new Quaternion(x, y, z, w), new Vector3(1, 1, 1))
      composed.elements.forEach((value, i) => expect(fit.matrix[i]).toBeCloseTo(value, 9))
      truth.elements.forEach((value, i) => expect(fit.matrix[i]).toBeCloseTo(value, 9))
      expect(w).toBeGreaterThanOrEqual(0)
    }
  })
})

describe('reflection guard on coplanar pairs (Umeyama 1991)', () => {
  // Five tie points on a floor (z = 0), turned 90 degrees about z and moved. H = sum m h^T has rank 2, so
  // the third singular vectors' signs are arbitrary and R = V U^T may mirror across the floor: it fits
  // coplanar points just as well (a naive SVD can return det(R) = -1, from memory; Umeyama 1991).
  const floor: V[] = [[0, 0, 0], [4, 0, 0], [0, 3, 0], [4, 3, 0], [1.5, 2, 0]]
  const truth = [0, 1, 0, 0, -1, 0, 0, 0, 0, 0, 1, 0, 1, 2, 3, 1]
  const pairs = pairsFrom(floor, truth)

  it('shows the naive SVD mirrors (det -1, computed here with ml-matrix) and the guarded fit does not', () => {
    const n = floor.length
    const cm = [0, 1, 2].map((a) => pairs.reduce((s, p) => s + p.moving[a]!, 0) / n)
    const ch = [0, 1, 2].map((a) => pairs.reduce((s, p) => s + p.held[a]!, 0) / n)
    const h = Matrix.zeros(3, 3)
    for (const p of pairs) for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) h.set(a, b, h.get(a, b) + (p.moving[a]! - cm[a]!) * (p.held[b]! - ch[b]!))
    const svd = new SingularValueDecomposition(h)
    const naive = svd.rightSingularVectors.mmul(svd.leftSingularVectors.transpose())
    expect(determinant(naive)).toBeCloseTo(-1, 12)

    const fit = ok(fitRigidSvd(pairs))
    expect(det3(rotationOf(fit.matrix))).toBeCloseTo(1, 12)
    rotationOf(fit.matrix).forEach((value, i) => expect(value).toBeCloseTo(rotationOf(truth)[i]!, 12))
    fit.translation.forEach((value, i) => expect(value).toBeCloseTo([1, 2, 3][i]!, 12))
    expect(fit.rms).toBeLessThan(1e-12)
    // Horn's quaternion is a rotation by construction and agrees.
    const horn = ok(fitRigidHorn(pairs))
    horn.matrix.forEach((value, i) => expect(value).toBeCloseTo(fit.matrix[i]!, 12))
  })
})

describe('noisy pairs: accuracy from sigma and n (least squares; Arun et al. 1987)', () => {
  // Derivation for the tolerances (isotropic Gaussian noise sigma per coordinate on the held points only,
  // n pairs): the fitted transform is a linear least-squares estimate near the truth, so
  // - the mapped moving centroid has error ~ N(0, sigma^2 / n) per axis (the mean of n noisy residuals);
  // - the small rotation error about axis k through the centroid has standard deviation
  //   sigma / sqrt(sum_i d_ik^2), d_ik = distance of centred point i from that axis (the moment of the
  //   points about the axis, as for a line slope: sigma / sqrt(sum x^2));
  // - the residual sum of squares is sigma^2 chi^2(3n - 6), so RMS^2 ~ sigma^2 (3n - 6) / n, about
  //   3 sigma^2 (RMS ~ sigma sqrt 3), with relative standard deviation of the RMS ~ 1 / sqrt(2 (3n - 6)).
  // Checks allow 5 standard deviations (fixed seed: a pass is then not luck).
  const sigma = 0.002
  const n = 300

  function noisyCase(seed: number) {
    const rand = mulberry32(seed)
    const gauss = normal(rand)
    const truth = randomRigid(rand)
    const moving: V[] = Array.from({ length: n }, () => [rand() * 20 - 10, rand() * 12 - 6, rand() * 4])
    const pairs: TiePair[] = moving.map((p) => {
      const h = transformPoint(truth.elements, ...p)
      return { moving: p, held: [h[0] + sigma * gauss(), h[1] + sigma * gauss(), h[2] + sigma * gauss()] }
    })
    return { truth, moving, pairs }
  }

  it('recovers a random rigid transform within tolerances derived from sigma and n, RMS ~ sigma sqrt 3', () => {
    for (const seed of [21, 22, 23]) {
      const { truth, moving, pairs } = noisyCase(seed)
      const fit = ok(fitRigid(pairs))
      const c = [0, 1, 2].map((a) => moving.reduce((s, p) => s + p[a]!, 0) / n) as V
      const ours = transformPoint(fit.matrix, ...c), theirs = transformPoint(truth.elements, ...c)
      for (let a = 0; a < 3; a++) expect(Math.abs(ours[a]! - theirs[a]!)).toBeLessThan((5 * sigma) / Math.sqrt(n))
      // Rotation error dR = R_fit R_true^T ~ I + [w]x; w from its skew part, expressed in the held frame.
      const rf = rotationOf(fit.matrix), rt = rotationOf(truth.elements)
      const d = (i: number, j: number) => rf[3 * i]! * rt[3 * j]! + rf[3 * i + 1]! * rt[3 * j + 1]! + rf[3 * i + 2]! * rt[3 * j + 2]!
      const w = [(d(2, 1) - d(1, 2)) / 2, (d(0, 2) - d(2, 0)) / 2, (d(1, 0) - d(0, 1)) / 2]
      // Moments about the held-frame axes through the held centroid (the rotated moving points).
      const held = moving.map((p) => transformPoint(truth.elements, ...p))
      const hc = [0, 1, 2].map((a) => held.reduce((s, p) => s + p[a]!, 0) / n)
      for (let k = 0; k < 3; k++) {
        const moment = held.reduce((s, p) => s + [0, 1, 2].filter((a) => a !== k).reduce((t, a) => t + (p[a]! - hc[a]!) ** 2, 0), 0)
        expect(Math.abs(w[k]!)).toBeLessThan((5 * sigma) / Math.sqrt(moment))
      }
      const expectedRms = sigma * Math.sqrt((3 * n - 6) / n)
      expect(Math.abs(fit.rms / expectedRms - 1)).toBeLessThan(5 / Math.sqrt(2 * (3 * n - 6)))
      expect(fit.rms / (sigma * Math.sqrt(3))).toBeGreaterThan(0.9)
      expect(fit.rms / (sigma * Math.sqrt(3))).toBeLessThan(1.1)
      expect(fit.max).toBeGreaterThanOrEqual(fit.rms)
      expect(fit.max).toBe(Math.max(...fit.pairs.map((p) => p.distance)))
    }
  })

  it('agrees to 1e-9 with the centred cross-covariance and an SVD taken here (independent route, ml-matrix)', () => {
    const { pairs } = noisyCase(31)
    // Written out from Arun et al. 1987 with Umeyama's guard: H = sum (m - cm)(h - ch)^T = U S V^T,
    // R = V diag(1, 1, sign det(V U^T)) U^T, t = ch - R cm.
    const cm = [0, 1, 2].map((a) => pairs.reduce((s, p) => s + p.moving[a]!, 0) / n)
    const ch = [0, 1, 2].map((a) => pairs.reduce((s, p) => s + p.held[a]!, 0) / n)
    const centredM = new Matrix(pairs.map((p) => [0, 1, 2].map((a) => p.moving[a]! - cm[a]!)))
    const centredH = new Matrix(pairs.map((p) => [0, 1, 2].map((a) => p.held[a]! - ch[a]!)))
    const h = centredM.transpose().mmul(centredH)
    const svd = new SingularValueDecomposition(h)
    const u = svd.leftSingularVectors, v = svd.rightSingularVectors
    const guard = Matrix.diag([1, 1, Math.sign(determinant(v.mmul(u.transpose())))])
    const r = v.mmul(guard).mmul(u.transpose())
    const t = Matrix.columnVector(ch).sub(r.mmul(Matrix.columnVector(cm)))
    const fit = ok(fitRigid(pairs))
    for (let i = 0; i < 3; i++) {
      for (let j = 0; j < 3; j++) expect(Math.abs(fit.matrix[4 * j + i]! - r.get(i, j))).toBeLessThan(1e-9)
      expect(Math.abs(fit.translation[i]! - t.get(i, 0))).toBeLessThan(1e-9)
    }
  })

  it('gives the same transform by Horn and by SVD to 1e-9 on noisy pairs (Horn 1987 vs Arun et al. 1987)', () => {
    for (const seed of [41, 42, 43, 44]) {
      const { pairs } = noisyCase(seed)
      const svd = ok(fitRigidSvd(pairs)), horn = ok(fitRigidHorn(pairs))
      for (let i = 0; i < 16; i++) expect(Math.abs(svd.matrix[i]! - horn.matrix[i]!)).toBeLessThan(1e-9)
      for (let i = 0; i < 4; i++) expect(Math.abs(svd.quaternion[i]! - horn.quaternion[i]!)).toBeLessThan(1e-9)
      expect(Math.abs(svd.rms - horn.rms)).toBeLessThan(1e-12)
    }
  })
})

describe('check points and disabled pairs (ASPRS Positional Accuracy Standards Ed. 2: held-out checks)', () => {
  const corners: V[] = [[0, 0, 0], [5, 0, 0], [0, 4, 0], [0, 0, 3], [5, 4, 3]]
  const truth = new Matrix4().makeRotationZ(0.3).setPosition(10, -2, 0.5).elements

  it('keeps check points out of the fit and reports their residuals apart', () => {
    const base = pairsFrom(corners, truth)
    const checkMoving: V = [2, 2, 1]
    const checkHeld = transformPoint(truth, ...checkMoving)
    const shifted: V = [checkHeld[0] + 0.03, checkHeld[1] - 0.04, checkHeld[2]]
    const withCheck: TiePair[] = [...base.slice(0, 2), { moving: checkMoving, held: shifted, checkPoint: true }, ...base.slice(2)]
    const plain = ok(fitRigid(base))
    const fit = ok(fitRigid(withCheck))
    fit.matrix.forEach((value, i) => expect(value).toBeCloseTo(plain.matrix[i]!, 12))
    expect(fit.count).toBe(5)
    expect(fit.checkCount).toBe(1)
    expect(fit.rms).toBeLessThan(1e-12)
    // A 3-4-5 offset of 3 and 4 cm: the check point's residual is 5 cm (R m + t - h = -(offset)).
    expect(fit.checkRms).toBeCloseTo(0.05, 12)
    expect(fit.checkMax).toBeCloseTo(0.05, 12)
    const check = fit.pairs.find((p) => p.checkPoint)!
    expect(check.index).toBe(2)
    expect(check.residual[0]).toBeCloseTo(-0.03, 12)
    expect(check.residual[1]).toBeCloseTo(0.04, 12)
    expect(fit.pairs.map((p) => p.index)).toEqual([0, 1, 2, 3, 4, 5])
  })

  it('ignores disabled pairs, even wild or broken ones, and does not list them', () => {
    const base = pairsFrom(corners, truth)
    const pairs: TiePair[] = [...base, { moving: [1, 1, 1], held: [900, 900, 900], enabled: false }, { moving: [Number.NaN, 0, 0], held: [0, 0, 0], enabled: false }]
    const fit = ok(fitRigid(pairs))
    expect(fit.rms).toBeLessThan(1e-12)
    expect(fit.pairs.map((p) => p.index)).toEqual([0, 1, 2, 3, 4])
  })
})

describe('degenerate input gives a named problem, never NaN', () => {
  it('refuses fewer than 3 enabled fit pairs (check points do not count)', () => {
    const pairs: TiePair[] = [
      { moving: [0, 0, 0], held: [0, 0, 0] },
      { moving: [1, 0, 0], held: [1, 0, 0] },
      { moving: [0, 1, 0], held: [0, 1, 0], checkPoint: true },
      { moving: [0, 0, 1], held: [0, 0, 1], enabled: false },
    ]
    const r = fitRigid(pairs)
    expect(r.ok).toBe(false)
    if (r.ok) return
    expect(r.reason).toBe('too-few-pairs')
    expect(r.message).toMatch(/2 enabled fit pairs.*at least 3/)
  })

  it('names the pair with a non-finite coordinate', () => {
    const pairs: TiePair[] = [
      { moving: [0, 0, 0], held: [0, 0, 0] },
      { moving: [1, 0, 0], held: [1, 0, 0] },
      { moving: [0, 1, 0], held: [0, Number.POSITIVE_INFINITY, 0] },
      { moving: [0, 0, 1], held: [0, 0, 1] },
    ]
    const r = fitRigid(pairs)
    expect(r).toMatchObject({ ok: false, reason: 'not-finite', pairIndex: 2, side: 'held' })
    const short = fitRigid([{ moving: [0, 0], held: [0, 0, 0] }, ...pairs.slice(0, 2)] as TiePair[])
    expect(short).toMatchObject({ ok: false, reason: 'not-finite', pairIndex: 0, side: 'moving' })
  })

  it('refuses collinear pairs on either side (the rotation about the line is unknown)', () => {
    const line: TiePair[] = [0, 1, 2.5, 4].map((s) => ({ moving: [s, 2 * s, 3 + s], held: [s + 1, 2 * s, 3 + s] }))
    expect(fitRigid(line)).toMatchObject({ ok: false, reason: 'collinear', side: 'moving', pairIndex: null })
    // A nearly straight line within rounding (1e-9 m off over metres) counts as a line too.
    const almost = line.map((p, i) => ({ ...p, moving: [p.moving[0]!, p.moving[1]!, p.moving[2]! + (i === 2 ? 1e-9 : 0)] }))
    expect(fitRigid(almost)).toMatchObject({ ok: false, reason: 'collinear' })
    // Moving side fine, held side mis-picked onto a line.
    const heldLine: TiePair[] = [[0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 1]].map((m, i) => ({ moving: m, held: [i, 0, 0] }))
    expect(fitRigid(heldLine, 'horn')).toMatchObject({ ok: false, reason: 'collinear', side: 'held' })
  })

  it('names a duplicated tie point (coincident pairs)', () => {
    const pairs: TiePair[] = [
      { moving: [0, 0, 0], held: [0, 0, 0] },
      { moving: [3, 1, 0], held: [3, 1, 0] },
      { moving: [3, 1, 0], held: [0, 2, 0] },
    ]
    expect(fitRigid(pairs)).toMatchObject({ ok: false, reason: 'coincident', pairIndex: 2, otherIndex: 1, side: 'moving' })
    const allOne: TiePair[] = [0, 1, 2].map(() => ({ moving: [5, 5, 5], held: [1, 2, 3] }))
    expect(fitRigid(allOne)).toMatchObject({ ok: false, reason: 'coincident', pairIndex: 1, otherIndex: 0 })
  })
})

describe('describeTransform: X, then Y, then Z about the fixed scene axes, degrees', () => {
  it('round-trips random matrices and angles (reference library: three Euler order ZYX, R = Rz Ry Rx)', () => {
    const rand = mulberry32(77)
    for (let i = 0; i < 200; i++) {
      const m = randomRigid(rand)
      const d = describeTransform(m.elements)!
      const back = composeTransform(d)
      m.elements.forEach((value, j) => expect(back[j]).toBeCloseTo(value, 12))
      const euler = new Euler().setFromRotationMatrix(m, 'ZYX')
      expect(d.rotationDegrees.x).toBeCloseTo((euler.x * 180) / Math.PI, 9)
      expect(d.rotationDegrees.y).toBeCloseTo((euler.y * 180) / Math.PI, 9)
      expect(d.rotationDegrees.z).toBeCloseTo((euler.z * 180) / Math.PI, 9)
      expect(d.translation).toEqual([m.elements[12], m.elements[13], m.elements[14]])
      const angles = { x: rand() * 360 - 180, y: rand() * 180 - 90, z: rand() * 360 - 180 }
      const again = describeTransform(composeTransform({ translation: [1, 2, 3], rotationDegrees: angles }))!
      expect(again.rotationDegrees.x).toBeCloseTo(angles.x, 9)
      expect(again.rotationDegrees.y).toBeCloseTo(angles.y, 9)
      expect(again.rotationDegrees.z).toBeCloseTo(angles.z, 9)
    }
  })

  it('reads a heading as z and a pure turn about x as x (the stated convention)', () => {
    const heading = describeTransform(new Matrix4().makeRotationZ(Math.PI / 6).setPosition(4, 5, 6).elements)!
    expect(heading.rotationDegrees).toEqual({ x: 0, y: 0, z: expect.closeTo(30, 12) })
    expect(heading.translation).toEqual([4, 5, 6])
    const roll = describeTransform(new Matrix4().makeRotationX(-Math.PI / 4).elements)!
    expect(roll.rotationDegrees).toEqual({ x: expect.closeTo(-45, 12), y: 0, z: 0 })
  })

  it('puts the whole turn into z at gimbal lock (y = 90) and still round-trips the matrix', () => {
    const m = composeTransform({ translation: [0, 0, 0], rotationDegrees: { x: 20, y: 90, z: 10 } })
    const d = describeTransform(m)!
    expect(d.rotationDegrees.x).toBe(0)
    expect(d.rotationDegrees.y).toBeCloseTo(90, 9)
    composeTransform(d).forEach((value, j) => expect(value).toBeCloseTo(m[j]!, 9))
  })

  it('refuses a matrix that is not rigid', () => {
    expect(describeTransform(new Matrix4().makeScale(1, 1, -1).elements)).toBeNull()
  })
})
