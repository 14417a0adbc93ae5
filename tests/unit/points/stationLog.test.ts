import { readFileSync } from 'node:fs'
import { Matrix4, Vector3 } from 'three'
import { describe, expect, it } from 'vitest'
import { detectFormat, readAll, type StationLogHeaderInfo } from '../../../server/points/readers/index'
import { SAMPLE_STATION_LOG } from './lib/samples'

const DEG = Math.PI / 180
const encode = (s: string) => new TextEncoder().encode(s)

function log(header: Record<string, string>, rows: string[]): Uint8Array {
  const lines = ['# spanmark-station-log 1', ...Object.entries(header).map(([k, v]) => `${k}: ${v}`), ...rows]
  return encode(lines.join('\n') + '\n')
}

const BASE = {
  station: 'test-head',
  position: '0 0 0',
  heading: '0',
  'rated-range': '40',
  'laser-class': '1',
  'shots-per-reading': '10',
  'range-uncertainty': '0.003',
  'angular-uncertainty': '0.02',
}

describe('station log reader', () => {
  it('the worked spherical-to-Cartesian examples (derived) through the whole reader (a0 = 2 mm, pose at the origin)', async () => {
    const cloud = await readAll(
      log({ ...BASE, 'shots-per-reading': '2', 'range-zero-offset': '0.002' }, ['90 0 10 10', '0 90 1.998 1.998']),
      'station-log',
    )
    expect(cloud.count).toBe(2)
    const p = Array.from(cloud.positions)
    // (r 10, H 90, V 0) with a0 = 2 mm -> (0, 10.002, 0); (r 2 after a0, V 90) -> (0, 0, 2).
    ;[0, 10.002, 0, 0, 0, 2].forEach((v, i) => expect(p[i]).toBeCloseTo(v, 12))
  })

  it('positions match three Vector3.setFromSphericalCoords and Matrix4 (pose and offsets), uncertainties the stated formula', async () => {
    const cloud = await readAll(encode(SAMPLE_STATION_LOG), 'station-log')
    const header = cloud.header as StationLogHeaderInfo
    expect(header.laserClass).toBe('2M')
    expect(header.stationId).toBe('bay-3')
    expect(cloud.count).toBe(4)
    // Rows kept: 1, 2, 3 (two valid samples of four; min-valid-samples 2) and 6.
    const rows = [
      [0, 0, [5.0, 5.002, 4.998, 5.0]],
      [45.5, -10, [7.1, 7.12, 7.11, 7.09]],
      [90, 10, [3.3, 3.31]],
      [200.25, -89.5, [1.234, 1.236, 1.235, 1.233]],
    ] as const
    rows.forEach(([pan, tilt, samples], i) => {
      const n = samples.length
      const mean = samples.reduce((a, b) => a + b, 0) / n
      const s = Math.sqrt(samples.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1))
      const r = mean + header.rangeZeroOffset
      // Outside reference for the geometry: three's spherical coordinates (Y-up: phi from +Y, theta
      // from +Z; ours = three's (z, x, y)) and Matrix4 for the mount and the pose.
      const beam = new Vector3().setFromSphericalCoords(r + header.beamOffset[0], Math.PI / 2 - tilt * DEG, pan * DEG)
      const along = new Vector3(beam.z, beam.x, beam.y)
      const head = new Matrix4().makeRotationZ(pan * DEG).multiply(new Matrix4().makeRotationY(-tilt * DEG))
      const sideways = new Vector3(0, header.beamOffset[1], header.beamOffset[2]).applyMatrix4(head)
      const axis = new Vector3(...header.axisOffset).applyMatrix4(new Matrix4().makeRotationZ(pan * DEG))
      const local = along.add(sideways).add(axis)
      const world = local.applyMatrix4(new Matrix4().makeRotationZ(header.headingDeg * DEG).setPosition(...header.position))
      expect(cloud.positions[i * 3]).toBeCloseTo(world.x, 10)
      expect(cloud.positions[i * 3 + 1]).toBeCloseTo(world.y, 10)
      expect(cloud.positions[i * 3 + 2]).toBeCloseTo(world.z, 10)
      // u^2 along = s^2/n + u_sys^2, across = (r u_angle)^2 twice, per-axis RMS (rangeAngleUncertainty.ts).
      const along2 = (s * s) / n + header.rangeUncertainty ** 2
      const across = r * header.angularUncertaintyDeg * DEG
      expect(cloud.uncertainties![i]).toBeCloseTo(Math.fround(Math.sqrt((along2 + 2 * across * across) / 3)), 7)
    })
    // Row 4: one valid sample of four; row 5: 45 m, beyond the 40 m rated range.
    expect(cloud.summary.dropped).toEqual({ tooFewSamples: 1, beyondRatedRange: 1 })
  })

  it('readings beyond the rated range and with too few valid samples are dropped and counted', async () => {
    // Common practice, no source: a hobby two-axis scanner fires several shots per reading and averages
    // them, ten being typical; sensors of that class are rated to about 40 m, and readings beyond the
    // rated range are discarded. Default minimum: half the shots (5 of 10).
    const ten = (r: number) => Array.from({ length: 10 }, (_, i) => (r + (i - 4.5) * 0.001).toFixed(4)).join(' ')
    const rows = [
      `0 0 ${ten(12)}`,
      `1 0 ${ten(39.9)}`,
      `2 0 ${ten(40.2)}`, // beyond
      `3 0 ${ten(55)}`, // beyond
      '4 0 12.001 12.002 12.003 12.004 - - - - - -', // 4 of 10: too few
      '5 0 12.001 12.002 12.003 12.004 12.005 - - - - -', // 5 of 10: kept
      '6 0 0 0 0 0 0 0 0 0 0 0', // no returns at all
    ]
    const cloud = await readAll(log(BASE, rows), 'station-log')
    expect(cloud.count).toBe(3)
    expect(cloud.summary.dropped).toEqual({ beyondRatedRange: 2, tooFewSamples: 2 })
    expect((cloud.header as StationLogHeaderInfo).minValidSamples).toBe(5)
  })

  it('all readings dropped: "the file holds no points" with the reasons', async () => {
    await expect(readAll(log({ ...BASE, 'shots-per-reading': '2' }, ['0 0 50 50', '1 0 - 3']), 'station-log')).rejects.toThrow(
      'line 11: the file holds no points (all 2 readings were left out: 1 beyond the rated range, 1 with too few valid samples)',
    )
  })

  it('header problems name the key or line', async () => {
    const { 'rated-range': _, ...noRange } = BASE
    await expect(readAll(log(noRange, ['0 0 1 1']), 'station-log')).rejects.toThrow("header field 'rated-range': missing 'rated-range'")
    await expect(readAll(log({ ...BASE, 'laser-class': '5' }, ['0 0 1 1']), 'station-log')).rejects.toThrow(
      "header line 6: laser-class '5' is not an IEC 60825-1 class",
    )
    await expect(readAll(log({ ...BASE, colour: 'red' }, ['0 0 1 1']), 'station-log')).rejects.toThrow("header line 10: 'colour' is not a station log key")
    await expect(readAll(log(BASE, ['0 95 1 1']), 'station-log')).rejects.toThrow('line 10: tilt 95 is outside -90..90 degrees')
    await expect(readAll(log({ ...BASE, 'shots-per-reading': '2' }, ['0 0 1 1 1']), 'station-log')).rejects.toThrow(
      'line 10: more than the 2 range samples of shots-per-reading',
    )
  })

  it('the example in readers/README.md reads as the README says', async () => {
    const readme = readFileSync(new URL('../../../server/points/readers/README.md', import.meta.url), 'utf8')
    const block = /```\n(# spanmark-station-log 1\n[\s\S]*?)```/.exec(readme)?.[1]
    expect(block).toBeDefined()
    const bytes = encode(block!)
    expect(detectFormat(bytes, 'loft-east-2.log')).toBe('station-log')
    const cloud = await readAll(bytes, 'station-log')
    expect(cloud.count).toBe(2)
    expect(cloud.summary.dropped).toEqual({ tooFewSamples: 1, beyondRatedRange: 1 })
  })
})
