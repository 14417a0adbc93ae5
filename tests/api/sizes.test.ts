// A size marker through the API: a box 0.60 x 0.40 x 1.20 m standing on a floor, scanned from four stations by
// the project's own ray caster (tests/utils/stationScans.ts; 4 mm range noise), each station uploaded in its own
// frame and placed by its pose, made one object of four members, each member trimmed as a person would (a
// keep box round the box, a cut below 3 cm). The truths are the box's own dimensions (derived); the sizes'
// method and the coverage of their U are checked in tests/unit/measure/sizes.test.ts. The last part checks the
// kind's check (server/markers/kinds/size.ts) on a context of its own, on this server's compute pool: the
// pool gives what shared/measure/sizes.ts gives when called directly (the direct call is the reference).
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SizeResult } from '@shared/kinds/size'
import { measureSizes } from '@shared/measure/sizes'
import { resultOf, type Marker } from '@shared/schemas'
import { sharedFloat64Array } from '../../server/compute/pool'
import { checkMarker, type CheckContext, type CheckInput } from '../../server/markers/check'
import { Stop, type ObjectPointsRead } from '../../server/markers/checkParts'
import { kindCheck } from '../../server/markers/kinds'
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { boxFaces } from '../../server/demo/synth/raycast'
import { ingestScan } from '../../server/points/ingest'
import { upload } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { castStations, stationsAround, trialScan, type StationBeams } from '../utils/stationScans'
import { mulberry32, normal } from '../unit/measure/random'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let sceneId: string
let otherSceneId: string
let objectId: string
let keepTrimId: string
let beams: StationBeams[]
const SIGMA = 0.004
const look = { reflectance: 0.5, color: [150, 140, 130] as [number, number, number] }

beforeAll(async () => {
  t = await startTestServer()
  owner = await signUpAgent(t, 'Size Owner')
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Crates' }).expect(201)).body.project.id
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Yard' }).expect(201)).body.scene.id
  otherSceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Store' }).expect(201)).body.scene.id
  const floor = { kind: 'rect' as const, axis: 2 as const, at: 0, min: [-6, -6] as [number, number], max: [6, 6] as [number, number], ...look }
  beams = castStations(stationsAround(0, 0, 2.0, 1.8, [0, 90, 180, 270], 0.45, 0.5), [floor, ...boxFaces([-0.3, -0.2, 0], [0.3, 0.2, 1.2], look, ['-z'])])
  const gauss = normal(mulberry32(2027))
  // Each station's points in its own frame (origin at the scanner), placed in the scene by its position; each
  // processed here as the worker would (no worker process in this file).
  const placements: string[] = []
  for (const [s, b] of beams.entries()) {
    const local = new Float64Array(b.ranges.length * 3)
    for (let i = 0; i < b.ranges.length; i++) {
      const r = b.ranges[i]! + SIGMA * gauss()
      for (let a = 0; a < 3; a++) local[3 * i + a] = r * b.dirs[3 * i + a]!
    }
    const bytes = writeBinaryPly({ count: b.ranges.length, positions: local }, ['test geometry'])
    const scanId = (await upload(owner.agent, projectId, bytes, `station-${s}.ply`).expect(202)).body.scan.id as string
    const { db, objects, log } = t.server.services
    expect(await ingestScan({ db, objects, log, lazLimitBytes: t.config.uploads.lazLimitBytes, staleMs: t.config.ingestStaleMs, maxAttempts: 3, name: 'test' }, scanId)).toBe('done')
    await owner.agent.patch(`/api/scans/${scanId}`).send({ enteredUncertainty: SIGMA }).expect(200)
    const [x, y, z] = b.origin
    placements.push((await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId, matrix: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, x, y, z, 1] }).expect(201)).body.instance.id)
  }
  objectId = (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: 'Crate', members: placements }).expect(201)).body.object.id
  for (const instanceId of placements) {
    const keep = await owner.agent.post(`/api/objects/${objectId}/trims`).send({ instanceId, mode: 'keep', shape: { shape: 'box', centre: [0, 0, 1], size: [0.7, 0.5, 2] } }).expect(201)
    keepTrimId ??= keep.body.trim.id
    await owner.agent.post(`/api/objects/${objectId}/trims`).send({ instanceId, mode: 'cut', shape: { shape: 'below', point: [0, 0, 0.03] } }).expect(201)
  }
}, 120_000)

afterAll(async () => {
  await t?.stop()
})

describe('a size marker on an object of four stations', () => {
  it('gives the box its length, width and height within their U, the height from the floor it stands on', async () => {
    const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'size', params: { objectId } }).expect(201)
    const m = res.body.marker as Marker
    expect(m.check.state, m.check.reason ?? '').toBe('checked')
    const r = resultOf(m.check, 'size')!
    expect(m.check.value).toBe(r.length.value)
    expect(Math.abs(r.length.value - 0.6), `length ${r.length.value} +- ${r.length.U}`).toBeLessThanOrEqual(r.length.U)
    expect(Math.abs(r.width.value - 0.4), `width ${r.width.value} +- ${r.width.U}`).toBeLessThanOrEqual(r.width.U)
    expect(Math.abs(r.height.value - 1.2), `height ${r.height.value} +- ${r.height.U}`).toBeLessThanOrEqual(r.height.U)
    expect(r.floor.found).toBe(true)
    expect(r.objectName).toBe('Crate')
    expect(m.anchors).toEqual([])
  })

  it('refuses an object that is not in the scene, naming the field', async () => {
    const res = await owner.agent.post(`/api/scenes/${otherSceneId}/markers`).send({ kind: 'size', params: { objectId } }).expect(400)
    expect(res.body.error.message).toBe('body.params.objectId: no object with this id in the scene.')
    const bad = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'size', params: { objectId, extra: 1 } }).expect(400)
    expect(bad.body.error.field).toMatch(/^params/)
  })

  it('is checked again when a trim of its object changes: a keep box that leaves out one end says which side cannot be fitted', async () => {
    const m = (await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'size', label: 'crate cut', params: { objectId } }).expect(201)).body.marker as Marker
    // The first member's keep box now ends at x = 0.1: that station (at +x) no longer sees the box's end.
    await owner.agent.patch(`/api/trims/${keepTrimId}`).send({ shape: { shape: 'box', centre: [-0.3, 0, 1], size: [0.8, 0.5, 2] } }).expect(200)
    const deadline = Date.now() + 30_000
    let after: Marker
    for (;;) {
      after = (await owner.agent.get(`/api/markers/${m.id}`).expect(200)).body.marker as Marker
      if (after.check.state !== 'pending' && after.check.basedOn !== m.check.basedOn) break
      if (Date.now() > deadline) throw new Error(`the size marker was not checked again: ${JSON.stringify(after.check.state)}`)
      await new Promise((r) => setTimeout(r, 50))
    }
    // That station alone saw the box's +x end: the end cannot be fitted now, and the check says so.
    expect(after.check.state).toBe('invalid-geometry')
    expect(after.check.reason).toMatch(/^the object "Crate" cannot be measured: a side of the object \(.+\) could not be fitted: too few points beside it\.$/)
    expect(after.check.value).toBeNull()
  })
})

const OBJECT_ID = '00000000-0000-4000-8000-00000000000a'

/** The object's read as the context gives it, from the same four stations (noise and registration 1 mm drawn here). */
let drawn: { scan: ReturnType<typeof trialScan>; points: Float64Array } | null = null
function boxRead(): ObjectPointsRead {
  if (!drawn) {
    const scan = trialScan(beams, { centre: [0, 0], half: [0.35, 0.25], turnDeg: 0, cutBelow: 0.02 }, SIGMA, 0.001, 77)
    const points = sharedFloat64Array(scan.points.length)
    points.set(scan.points)
    drawn = { scan, points }
  }
  const { scan, points } = drawn
  return {
    name: 'crate',
    points,
    around: scan.around,
    members: scan.counts.map((kept, i) => ({ instanceId: `00000000-0000-4000-8000-00000000010${i}`, scanName: `station ${'ABCD'[i]}`, registrationU: 0.001, stored: kept, kept })),
    pointUncertainty: SIGMA,
    spacing: 0.017,
    strayDropped: 0,
  }
}

function context(objectPoints: CheckContext['objectPoints']): CheckContext {
  return {
    placements: new Map(),
    scans: new Map(),
    settings: { anchorTolerance: null, requiredMargin: 0.05 },
    points: { snap: async () => null, slab: async () => new Float64Array(0), allPoints: async () => new Float64Array(0) },
    marker: async () => undefined,
    objectPoints,
  }
}

const input = (params: Record<string, unknown>): CheckInput => ({ kind: 'size', anchors: [], params, revision: 4 })

describe('the size check on a context of its own', () => {
  it('measures in the pool as the direct call does: the length as its value, each station’s registration in the parts', async () => {
    const read = boxRead()
    const asked: unknown[] = []
    const check = await checkMarker(input({ objectId: OBJECT_ID }), context(async (id, options) => (asked.push([id, options]), read)))
    expect(asked).toEqual([[OBJECT_ID, { around: 0.3 }]])
    expect(check.state, check.reason ?? '').toBe('checked')
    const result = SizeResult.parse(check.result)
    const direct = measureSizes(read.points, read.around, { sigma: SIGMA, spacing: 0.017, members: read.members.map((m) => ({ name: m.scanName, registrationU: 0.001, count: m.kept })) })
    if (!direct.ok) throw new Error(direct.detail)
    expect([result.length, result.width, result.height]).toEqual([direct.length, direct.width, direct.height])
    expect(check.value).toBe(direct.length.value)
    expect(check.expandedUncertainty).toBe(direct.length.U)
    expect(check.parts.map((p) => p.name)).toEqual(['face fits', 'registration (station A)', 'registration (station C)'])
    expect(Math.abs(check.value! - 0.6)).toBeLessThanOrEqual(check.expandedUncertainty!)
    expect(result.assumptions.join(' ')).toMatch(/floor it stands on/)
  })

  it('points not told apart by member (counts that do not add up, as after a stray filter) carry the largest registration on each face', async () => {
    const read = boxRead()
    read.members[0]!.kept -= 5
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

  it('refuses, as a reference, an object the context does not know (params.objectId)', async () => {
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
