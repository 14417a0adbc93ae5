import { Matrix4, Vector3 } from 'three'
import { describe, expect, it } from 'vitest'
import { panTiltPoint } from '@shared/geometry/panTiltMount'
import { rangeAngleUncertainty } from '@shared/geometry/rangeAngleUncertainty'
import { readingStatistics } from '@shared/geometry/repeatedReadings'
import { sphericalToCartesian } from '@shared/geometry/sphericalToCartesian'
import { applyStationPose } from '@shared/geometry/stationPose'

const DEG = Math.PI / 180
const ZERO_MOUNT = { axisOffset: [0, 0, 0], beamOffset: [0, 0, 0], rangeZeroOffset: 0 } as const

/**
 * three's Vector3.setFromSphericalCoords(radius, phi, theta) works in a Y-up frame: phi is the polar
 * angle from +Y, theta the azimuth from +Z towards +X, giving x = r sin(phi) sin(theta), y = r cos(phi),
 * z = r sin(phi) cos(theta). Ours is Z-up with azimuth H from +x towards +y and elevation V. Mapping:
 * phi = 90 deg - V, theta = H, and our (x, y, z) = three's (z, x, y): the cyclic swap of axes is a
 * rotation, so handedness is kept.
 */
function viaThree(range: number, azimuth: number, elevation: number): [number, number, number] {
  const v = new Vector3().setFromSphericalCoords(range, Math.PI / 2 - elevation, azimuth)
  return [v.z, v.x, v.y]
}

describe('spherical to Cartesian (x = r cosV cosH, y = r cosV sinH, z = r sinV, derived)', () => {
  it('agrees with three Vector3.setFromSphericalCoords under the explicit frame mapping', () => {
    const out = [0, 0, 0]
    for (const [r, h, v] of [
      [1, 0, 0],
      [10, 90, 0],
      [2, 0, 90],
      [7.5, 33, -12],
      [42, -170, 45],
      [0.3, 271.5, -89],
    ] as const) {
      sphericalToCartesian(r, h * DEG, v * DEG, out)
      const expected = viaThree(r, h * DEG, v * DEG)
      for (let a = 0; a < 3; a++) expect(out[a]).toBeCloseTo(expected[a]!, 12)
    }
  })

  it('worked examples (derived): (r 10, H 90, V 0) -> (0, 10, 0); (r 2, V 90) -> (0, 0, 2)', () => {
    const out = [0, 0, 0]
    sphericalToCartesian(10, 90 * DEG, 0, out)
    expect(out[0]).toBeCloseTo(0, 12)
    expect(out[1]).toBeCloseTo(10, 12)
    expect(out[2]).toBeCloseTo(0, 12)
    sphericalToCartesian(2, 0, 90 * DEG, out)
    expect(out[0]).toBeCloseTo(0, 12)
    expect(out[1]).toBeCloseTo(0, 12)
    expect(out[2]).toBeCloseTo(2, 12)
  })

  it('worked example (derived): a range zero offset a0 = 2 mm gives (0, 10.002, 0)', () => {
    const out = [0, 0, 0]
    panTiltPoint({ ...ZERO_MOUNT, rangeZeroOffset: 0.002 }, 10, 90 * DEG, 0, out)
    expect(out[0]).toBeCloseTo(0, 12)
    expect(out[1]).toBeCloseTo(10.002, 12)
    expect(out[2]).toBeCloseTo(0, 12)
  })

  it('mounting offsets: same as the chain Rz(H) T(axis) Ry(-V) T(beam) built with three Matrix4', () => {
    const mount = { axisOffset: [0.02, -0.01, 0.035], beamOffset: [0.012, 0.003, -0.004], rangeZeroOffset: 0.002 } as const
    const out = [0, 0, 0]
    for (const [r, h, v] of [
      [5, 0, 0],
      [3.3, 45, 20],
      [12, -120, -35],
      [0.8, 200, 85],
    ] as const) {
      panTiltPoint(mount, r, h * DEG, v * DEG, out)
      // three: tilting up by V about the pan frame's left (+y) axis is a rotation by -V about +y.
      const chain = new Matrix4()
        .makeRotationZ(h * DEG)
        .multiply(new Matrix4().makeTranslation(...mount.axisOffset))
        .multiply(new Matrix4().makeRotationY(-v * DEG))
        .multiply(new Matrix4().makeTranslation(...mount.beamOffset))
      const p = new Vector3(r + mount.rangeZeroOffset, 0, 0).applyMatrix4(chain)
      expect(out[0]).toBeCloseTo(p.x, 12)
      expect(out[1]).toBeCloseTo(p.y, 12)
      expect(out[2]).toBeCloseTo(p.z, 12)
    }
  })

  it('station pose: rotation about Z by the heading, then the position (three Matrix4)', () => {
    const out = [0, 0, 0]
    const position = [1.5, -2, 0.75] as const
    applyStationPose(30 * DEG, position, [2, 1, 0.5], 0, out, 0)
    const m = new Matrix4().makeRotationZ(30 * DEG).setPosition(...position)
    const p = new Vector3(2, 1, 0.5).applyMatrix4(m)
    expect(out).toEqual([expect.closeTo(p.x, 12), expect.closeTo(p.y, 12), expect.closeTo(p.z, 12)])
    applyStationPose(90 * DEG, [0, 0, 0], [1, 0, 0], 0, out, 0)
    expect(out[0]).toBeCloseTo(0, 12)
    expect(out[1]).toBeCloseTo(1, 12)
  })
})

describe('averaging repeated shots (JCGM 100:2008 section 4.2)', () => {
  it('JCGM 100 4.2.3: the mean of 4 shots with s = 2 mm has a standard uncertainty of 1 mm', () => {
    // Four samples m - a, m - a, m + a, m + a have s^2 = 4a^2/3, so s = 2 mm for a = sqrt(3) mm.
    const a = Math.sqrt(3) * 0.001
    const stats = readingStatistics([8.5 - a, 8.5 + a, 8.5 - a, 8.5 + a])
    expect(stats.mean).toBeCloseTo(8.5, 14)
    expect(stats.standardDeviation).toBeCloseTo(0.002, 14)
    expect(stats.standardErrorOfMean).toBeCloseTo(0.001, 14)
  })

  it('s uses n - 1 (GUM 4.2.2) and stays accurate for millimetre spread at tens of metres', () => {
    const samples = [38.001, 38.002, 38.003, 38.004, 38.005]
    const stats = readingStatistics(samples)
    // Sample variance of 1..5 mm is 2.5 mm^2.
    expect(stats.standardDeviation).toBeCloseTo(Math.sqrt(2.5) * 0.001, 12)
    expect(stats.standardErrorOfMean).toBeCloseTo(Math.sqrt(2.5 / 5) * 0.001, 12)
    expect(Number.isNaN(readingStatistics([5]).standardDeviation)).toBe(true)
  })

  it('point uncertainty: s^2/n and the systematic term along the beam, r x angle across it, per-axis RMS', () => {
    // JCGM 100 section 5.1 (independent inputs add in quadrature); the combination is stated in
    // shared/geometry/rangeAngleUncertainty.ts.
    const u = rangeAngleUncertainty(10, 0.001 ** 2, 0.003, 0.0002)
    expect(u.alongBeam).toBeCloseTo(Math.sqrt(1e-6 + 9e-6), 15)
    expect(u.acrossBeam).toBeCloseTo(0.002, 15)
    expect(u.perAxis).toBeCloseTo(Math.sqrt((1e-6 + 9e-6 + 2 * 4e-6) / 3), 15)
  })
})
