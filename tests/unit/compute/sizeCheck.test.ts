// A size marker's check (server/markers/kinds/size.ts) on a check context of its own (the objects' reads are
// the lead's; here the object's points come from four ray-cast stations of a box 0.60 x 0.40 x 1.20 m on a
// floor, tests/utils/stationScans.ts): the check in the compute pool gives what shared/measure/sizes.ts gives
// when called directly (the same code on another thread: the direct call is the reference), the value is the
// length within its U of the truth, the result reads as the kind's schema, and a gone object or a bad param
// ends the check with a reason.
import { afterAll, describe, expect, it } from 'vitest'
import { boxFaces } from '../../../server/demo/synth/raycast'
import { SizeResult } from '@shared/kinds/size'
import { measureSizes } from '@shared/measure/sizes'
import { closeComputePool, sharedFloat64Array } from '../../../server/compute/pool'
import { checkMarker, type CheckContext, type CheckInput } from '../../../server/markers/check'
import { Stop, type ObjectPointsRead } from '../../../server/markers/checkParts'
import { kindCheck } from '../../../server/markers/kinds'
import { castStations, stationsAround, trialScan } from '../../utils/stationScans'

const OBJECT_ID = '00000000-0000-4000-8000-00000000000a'
const look = { reflectance: 0.5, color: [150, 140, 130] as [number, number, number] }

afterAll(() => closeComputePool())

function boxRead(): ObjectPointsRead {
  const surfaces = [{ kind: 'rect' as const, axis: 2 as const, at: 0, min: [-6, -6] as [number, number], max: [6, 6] as [number, number], ...look }, ...boxFaces([-0.3, -0.2, 0], [0.3, 0.2, 1.2], look, ['-z'])]
  const beams = castStations(stationsAround(0, 0, 2.0, 1.8, [0, 90, 180, 270], 0.45, 0.5), surfaces)
  const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.25], turnDeg: 0, cutBelow: 0.02 }, 0.004, 0.001, 77)
  const points = sharedFloat64Array(scan.points.length)
  points.set(scan.points)
  return {
    name: 'crate',
    points,
    around: scan.around,
    members: scan.counts.map((kept, i) => ({ instanceId: `00000000-0000-4000-8000-00000000010${i}`, scanName: `station ${'ABCD'[i]}`, registrationU: 0.001, stored: kept, kept })),
    pointUncertainty: 0.004,
    spacing: 0.017,
    strayDropped: 0,
  }
}

function context(objectPoints: CheckContext['objectPoints']): CheckContext {
  return {
    placements: new Map(),
    scans: new Map(),
    settings: { anchorTolerance: null, requiredMargin: 0.05 },
    points: {
      snap: async () => null,
      slab: async () => new Float64Array(0),
      allPoints: async () => new Float64Array(0),
    },
    marker: async () => undefined,
    objectPoints,
  }
}

const input = (params: Record<string, unknown>): CheckInput => ({ kind: 'size', anchors: [], params, revision: 4 })

describe('a size marker checked', () => {
  it('measures the object in the pool as the direct call does: the length as its value, within U of 0.60 m', async () => {
    const read = boxRead()
    const asked: unknown[] = []
    const check = await checkMarker(input({ objectId: OBJECT_ID }), context(async (id, options) => (asked.push([id, options]), read)))
    expect(asked).toEqual([[OBJECT_ID, { around: 0.3 }]])
    expect(check.state, check.reason ?? '').toBe('checked')
    const result = SizeResult.parse(check.result)
    const direct = measureSizes(read.points, read.around, { sigma: 0.004, spacing: 0.017, members: read.members.map((m) => ({ name: m.scanName, registrationU: 0.001, count: m.kept })) })
    if (!direct.ok) throw new Error(direct.detail)
    expect(result.length).toEqual(direct.length)
    expect(result.height).toEqual(direct.height)
    expect(check.value).toBe(direct.length.value)
    expect(check.expandedUncertainty).toBe(direct.length.U)
    expect(check.parts).toEqual(direct.length.parts)
    expect(Math.abs(check.value! - 0.6)).toBeLessThanOrEqual(check.expandedUncertainty!)
    expect(Math.abs(result.width.value - 0.4)).toBeLessThanOrEqual(result.width.U)
    expect(Math.abs(result.height.value - 1.2)).toBeLessThanOrEqual(result.height.U)
    expect(result.objectName).toBe('crate')
    expect(result.floor.found).toBe(true)
    expect(result.assumptions.join(' ')).toMatch(/floor it stands on/)
  })

  it('points that cannot be told apart by member (counts that do not add up) carry the largest registration on each face', async () => {
    const read = boxRead()
    read.members[0]!.kept += 1
    const check = await checkMarker(input({ objectId: OBJECT_ID }), context(async () => read))
    expect(check.state).toBe('checked')
    expect(check.parts.map((p) => p.name)).toEqual(['face fits', 'registration (members not told apart)'])
    expect(check.parts[1]!.u).toBeCloseTo(Math.SQRT2 * 0.001, 12)
  })

  it('ends with the reason when the object is gone, has too few points, or the params are not valid', async () => {
    const gone = await checkMarker(input({ objectId: OBJECT_ID }), context(async () => { throw new Stop('invalid-geometry', 'the object was deleted.') }))
    expect(gone).toMatchObject({ state: 'invalid-geometry', reason: 'the object was deleted.', value: null })
    const few = await checkMarker(input({ objectId: OBJECT_ID }), context(async () => ({ ...boxRead(), points: new Float64Array(30), members: [] })))
    expect(few.state).toBe('too-few-points')
    expect(few.reason).toBe('the object "crate" cannot be measured: the object has 10 points; at least 30 are needed.')
    const bad = await checkMarker(input({ objectId: 'not-an-id' }), context(async () => boxRead()))
    expect(bad.state).toBe('invalid-geometry')
    expect(bad.reason).toMatch(/^the size marker's params are not valid/)
  })

  it('refuses, as a reference, an object that is not in the scene (params.objectId)', async () => {
    const refs = (has: boolean) => ({
      sceneId: 's',
      hasPlacement: () => true,
      hasObject: async () => has,
      findMarker: async () => undefined,
      invalid: (field: string, message: string) => new Error(`body.${field}: ${message}`),
    })
    await expect(kindCheck('size').references!({ objectId: OBJECT_ID }, refs(false))).rejects.toThrow('body.params.objectId: no object with this id in the scene.')
    await expect(kindCheck('size').references!({ objectId: OBJECT_ID }, refs(true))).resolves.toBeUndefined()
  })
})
