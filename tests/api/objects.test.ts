// Objects from captures as a scanner makes them: a box 0.60 x 0.40 x 1.20 m standing on a floor in front of a
// door 0.90 x 2.00 m in a 0.2 m wall, so that as it stands it passes with 0.150 m a side (the solids' own
// dimensions are the reference: (0.90 - 0.60) / 2). Scanned with its floor, the placement as the object
// takes the floor along; trimmed into an object, the clearance lies within its U of 0.150 m at each noise
// level. The same box from four stations, each seeing one side, the top and the floor in front, delivered in
// its own station frame and placed back by a known rigid matrix, made into one object: the same clearance.
// Stray points (isolated mixed pixels beside an edge) are dropped by the statistical outlier filter (Rusu et
// al. 2008). Synthetic scans of known geometry made here (tests/utils/solids.ts), not demo data.
import { ObjectHistory, resultOf, type Export, type Marker, type SceneObject, type Trim } from '@shared/schemas'
import { readAll } from '../../server/points/readers/index'
import { Matrix4 } from 'three'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { upload, waitForScan } from '../utils/scans'
import { joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { SurfaceSampler, wallWithOpening } from '../utils/solids'
import { waitChecked as waitCheckedBy } from '../utils/markers'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let mentor: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
let sceneId: string

const W = 0.6, D = 0.4, H = 1.2
/** Where the box stands: in front of the door, its 0.6 m side across it. */
const BOX_Y = -1.5
const TRUE_MARGIN = (0.9 - W) / 2
const X = [1, 0, 0], Y = [0, 1, 0], Z = [0, 0, 1]
const NOISES = [0.002, 0.01] as const

type Side = 'front' | 'back' | 'left' | 'right'
/**
 * The box's visible faces (no bottom: it stands on the floor) and the floor around it, scene frame. `sides`
 * limits the faces to what one station sees; `floor` is the square half-width of floor scanned around it.
 */
function boxOnFloor(noise: number, seed: number, sides: readonly Side[] = ['front', 'back', 'left', 'right'], floor = 1.0): SurfaceSampler {
  // floor 0: the box alone, as if scanned clean.
  const s = new SurfaceSampler(0.01, noise, seed)
  const x0 = -W / 2, y0 = BOX_Y - D / 2
  s.rect([x0, y0, H], X, W, Y, D) // top
  if (sides.includes('front')) s.rect([x0, y0, 0], X, W, Z, H)
  if (sides.includes('back')) s.rect([x0, y0 + D, 0], Z, H, X, W)
  if (sides.includes('left')) s.rect([x0, y0, 0], Z, H, Y, D)
  if (sides.includes('right')) s.rect([x0 + W, y0, 0], Y, D, Z, H)
  const footprint = (p: number[]) => Math.abs(p[0]!) < W / 2 && Math.abs(p[1]! - BOX_Y) < D / 2
  if (floor > 0) s.rect([-floor, BOX_Y - floor, 0], X, 2 * floor, Y, 2 * floor, footprint)
  return s
}

/** Isolated points beside the box's right edge, 2-14 cm out, none within 4 cm of another: mixed pixels. */
function strays(s: SurfaceSampler): SurfaceSampler {
  for (let i = 0; i < 12; i++) s.xyz.push(W / 2 + 0.02 + (i % 4) * 0.04, BOX_Y - D / 2 - 0.01 - (i % 3) * 0.05, 0.25 + i * 0.07)
  return s
}

async function scanOf(sampler: SurfaceSampler, name: string, noise: number, matrix?: number[]): Promise<string> {
  const scanId = (await upload(owner.agent, projectId, sampler.ply(), `${name}.ply`).expect(202)).body.scan.id as string
  const { scan } = await waitForScan(owner.agent, scanId, undefined, 120_000)
  expect(scan.status, `${name}: ${scan.error}`).toBe('ready')
  await owner.agent.patch(`/api/scans/${scanId}`).send({ enteredUncertainty: noise }).expect(200)
  const body = matrix ? { scanId, matrix } : { scanId }
  return (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send(body).expect(201)).body.instance.id as string
}

async function post(body: object, status = 201): Promise<Marker> {
  const res = await owner.agent.post(`/api/scenes/${sceneId}/markers`).send(body)
  if (res.status !== status) throw new Error(`POST marker: ${res.status} ${JSON.stringify(res.body)}`)
  return res.body.marker
}

const waitChecked = (id: string, revisionAbove = 0) => waitCheckedBy(owner.agent, id, revisionAbove)

async function waitForExport(id: string): Promise<Export> {
  const deadline = Date.now() + 30_000
  for (;;) {
    const e = (await owner.agent.get(`/api/exports/${id}`).expect(200)).body.export as Export
    if (e.status === 'ready' || e.status === 'failed') return e
    if (Date.now() > deadline) throw new Error(`export ${id} still ${e.status} after 30 s`)
    await new Promise((r) => setTimeout(r, 50))
  }
}

const download = (id: string) =>
  owner.agent
    .get(`/api/exports/${id}/file`)
    .buffer(true)
    .parse((r, done) => {
      const parts: Buffer[] = []
      r.on('data', (c: Buffer) => parts.push(c))
      r.on('end', () => done(null, Buffer.concat(parts)))
    })

const walls: Record<number, string> = {}
const sections = {} as Record<number, string>
const boxes: Record<number, string> = {}
let stations: { side: Side; instanceId: string; matrix: number[] }[] = []

/** The as-it-stands clearance of an object (or a placement) through the door of that noise level. */
const clearanceOf = (noise: number, object: { objectId: string } | { objectInstanceId: string }) =>
  post({ kind: 'clearance', params: { ...object, sectionMarkerId: sections[noise], orientation: { mode: 'as-it-stands' } } })

/** Cut the floor: a scene-frame "below" plane `above` over it, and a keep box around the box. */
const floorCut = (noise: number) => ({ mode: 'cut', shape: { shape: 'below', point: [0, BOX_Y, Math.max(0.02, 4 * noise)], up: [0, 0, 1] } })
const keepBoxAt = (x: number) => ({ mode: 'keep', shape: { shape: 'box', centre: [x, BOX_Y, H / 2], size: [W + 0.2, D + 0.2, H + 0.2] } })
const keepBox = keepBoxAt(0)
/** Each noise level's door and box stand 6 m along x from the last one's. */
const shiftOf = (noise: number) => 6 * NOISES.indexOf(noise as (typeof NOISES)[number])

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Object Owner')
  mentor = await signUpAgent(t, 'Object Mentor')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Objects' }).expect(201)).body.project.id
  await joinProject(t, owner.agent, projectId, mentor, 'mentor')
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Box and door' }).expect(201)).body.scene.id
  for (const [i, noise] of NOISES.entries()) {
    // Each noise level its own door, 6 m apart along x, and its own box in front of it.
    const shift = new Matrix4().makeTranslation(6 * i, 0, 0).elements
    walls[noise] = await scanOf(wallWithOpening({ width: 0.9, height: 2.0, thickness: 0.2, noise, seed: 20 + i }), `door-${noise}`, noise, shift)
    boxes[noise] = await scanOf(boxOnFloor(noise, 30 + i), `box-on-floor-${noise}`, noise, shift)
    const anchor = (x: number) => ({ instanceId: walls[noise]!, x: 6 * i + x, y: 0, z: 1 })
    sections[noise] = (await post({ kind: 'section', anchors: [anchor(-0.45), anchor(0.45)], params: { plane: 'two-points', thickness: 0.1, opening: true } })).id
  }
  // Four stations of the 2 mm box, each in its own frame: the station's points delivered as seen from a
  // station turned and set back (a known rigid matrix), placed by its inverse, as an accepted registration leaves them.
  const sides: Side[] = ['front', 'right', 'back', 'left']
  stations = []
  for (const [k, side] of sides.entries()) {
    const station = new Matrix4().makeRotationZ((k * Math.PI) / 2 + 0.3).setPosition(1 + k, -2 - k, 0.4)
    const toStation = station.clone().invert().elements
    const sampler = boxOnFloor(0.002, 40 + k, [side], 0.5).transformed(toStation)
    stations.push({ side, instanceId: await scanOf(sampler, `box-station-${side}`, 0.002, station.elements), matrix: station.elements })
  }
}, 240_000)

afterAll(async () => {
  await t?.stop()
})

describe('objects and trims', () => {
  it('makes, reads, changes and deletes objects and trims, with every bad input named', async () => {
    const noise = NOISES[0]
    const bad = async (path: string, body: object, status = 400) => (await owner.agent.post(path).send(body).expect(status)).body.error as { message: string; field?: string }
    expect((await bad(`/api/scenes/${sceneId}/objects`, { name: 'x', members: [] })).message).toContain('members: must name at least one placement')
    expect((await bad(`/api/scenes/${sceneId}/objects`, { name: 'x', members: [walls[noise], walls[noise]] })).message).toContain('names a placement twice')
    const other = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Elsewhere' }).expect(201)).body.scene.id
    expect((await bad(`/api/scenes/${other}/objects`, { name: 'x', members: [boxes[noise]] })).field).toBe('members.0')
    const object = (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: 'test box', members: [boxes[noise]] }).expect(201)).body.object as SceneObject
    expect(object).toMatchObject({ name: 'test box', members: [boxes[noise]], stray: null, trims: [] })
    // A trim of a placement that is not a member; a scene cut that keeps; a box without a size.
    expect((await bad(`/api/objects/${object.id}/trims`, { instanceId: walls[noise], ...keepBox })).field).toBe('instanceId')
    expect((await bad(`/api/instances/${boxes[noise]}/trims`, keepBox)).field).toBe('mode')
    expect((await bad(`/api/objects/${object.id}/trims`, { instanceId: boxes[noise], mode: 'keep', shape: { shape: 'box', centre: [0, 0, 0] } })).field).toBe('shape.size')
    expect((await bad(`/api/objects/${object.id}/trims`, { instanceId: boxes[noise], mode: 'keep', shape: { shape: 'prism', origin: [0, 0, 0], u: [1, 0, 0], v: [0, 0, 1], outline: [[0, 0], [1, 0], [2, 0]] } })).message).toContain('encloses no area')
    // Trims come back in the scene frame even though they are stored in the placement's.
    const trim = (await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId: boxes[noise], ...keepBox }).expect(201)).body.trim as Trim
    expect(trim.shape).toEqual({ ...keepBox.shape, centre: [expect.closeTo(0, 9), expect.closeTo(BOX_Y, 9), expect.closeTo(H / 2, 9)], rotation: [0, 0, 0, 1] })
    const renamed = (await owner.agent.patch(`/api/trims/${trim.id}`).send({ label: 'around the box' }).expect(200)).body.trim as Trim
    expect(renamed.label).toBe('around the box')
    expect((await owner.agent.get(`/api/objects/${object.id}`).expect(200)).body.object.trims).toHaveLength(1)
    // Mentors read but do not trim.
    await mentor.agent.get(`/api/objects/${object.id}/trims`).expect(200)
    await mentor.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId: boxes[noise], ...keepBox }).expect(403)
    const history = ObjectHistory.parse((await owner.agent.get(`/api/objects/${object.id}/history`).expect(200)).body).revisions
    expect(history.map((r) => `${r.action} ${r.trimId ? 'trim' : 'object'}`)).toEqual(['edited trim', 'created trim', 'created object'])
    await owner.agent.delete(`/api/objects/${object.id}`).expect(204)
    // The object's trims went with it.
    await owner.agent.get(`/api/trims/${trim.id}`).expect(404)
  })

  for (const noise of NOISES) {
    it(`trimmed, the box with its floor (${noise * 1000} mm noise) passes the door with its true 0.150 m within U`, async () => {
      // Before: the placement as the object takes the floor along and collides.
      const before = await waitChecked((await clearanceOf(noise, { objectInstanceId: boxes[noise]! })).id)
      expect(before.check.state, before.check.reason ?? '').not.toBe('pending')
      const object = (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: `box ${noise}`, members: [boxes[noise]] }).expect(201)).body.object as SceneObject
      await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId: boxes[noise], ...keepBoxAt(shiftOf(noise)) }).expect(201)
      await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId: boxes[noise], ...floorCut(noise) }).expect(201)
      const points = (await owner.agent.get(`/api/objects/${object.id}/points`).expect(200)).body
      // The brute-force count of what the trims keep is in tests/unit/measure/trims.test.ts; here: the floor is gone.
      expect(points.members[0].trimmed).toBeGreaterThan(10_000)
      const after = await waitChecked((await clearanceOf(noise, { objectId: object.id })).id)
      expect(after.check.state, after.check.reason ?? '').toBe('checked')
      const U = after.check.expandedUncertainty!
      console.info(`box with floor, ${noise * 1000} mm: before ${before.check.value?.toFixed(3) ?? before.check.state} (${before.check.reason ?? ''}), after ${after.check.value!.toFixed(4)} +- ${U.toFixed(4)} m (truth ${TRUE_MARGIN})`)
      // The same box scanned clean (no floor), its placement as the object: the trimmed object must agree.
      const cleanId = await scanOf(boxOnFloor(noise, 77, undefined, 0), `clean-box-${noise}`, noise, new Matrix4().makeTranslation(shiftOf(noise), 0, 0).elements)
      const clean = await waitChecked((await clearanceOf(noise, { objectInstanceId: cleanId })).id)
      console.info(`clean box, ${noise * 1000} mm: ${clean.check.value!.toFixed(4)} +- ${clean.check.expandedUncertainty!.toFixed(4)} m`)
      expect(Math.abs(after.check.value! - clean.check.value!)).toBeLessThanOrEqual(Math.max(U, clean.check.expandedUncertainty!))
      expect(before.check.value === null || before.check.value < 0).toBe(true)
      expect(Math.abs(after.check.value! - TRUE_MARGIN)).toBeLessThanOrEqual(U)
      expect(resultOf(after.check, 'clearance')!.objectPointCount).toBe(points.kept)
    })
  }

  it('an object of four stations of the box, each trimmed of its floor, gives the same clearance', async () => {
    const object = (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: 'box, four stations', members: stations.map((s) => s.instanceId) }).expect(201)).body.object as SceneObject
    for (const s of stations) await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId: s.instanceId, ...floorCut(0.002) }).expect(201)
    const read = (await owner.agent.get(`/api/objects/${object.id}/points`).expect(200)).body
    expect(read.members.map((m: { kept: number }) => m.kept).every((k: number) => k > 1000)).toBe(true)
    const m = await waitChecked((await clearanceOf(0.002, { objectId: object.id })).id)
    expect(m.check.state, m.check.reason ?? '').toBe('checked')
    expect(Math.abs(m.check.value! - TRUE_MARGIN)).toBeLessThanOrEqual(m.check.expandedUncertainty!)
    // Trims live in each placement's frame: moving a station moves its trim with it (the floor stays cut).
    const trims = (await owner.agent.get(`/api/objects/${object.id}/trims`).expect(200)).body.trims as Trim[]
    expect(trims.every((tr) => tr.shape.shape === 'below' && Math.abs(tr.shape.point[2] - 0.02) < 1e-9)).toBe(true)
  })

  it('drops stray points beside an edge, and a trim change reopens a signed-off clearance saying why', async () => {
    const noise = NOISES[0]
    const instanceId = await scanOf(strays(boxOnFloor(noise, 50)), 'box-with-strays', noise)
    const object = (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: 'box with strays', members: [instanceId] }).expect(201)).body.object as SceneObject
    await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId, ...floorCut(noise) }).expect(201)
    const withStrays = await waitChecked((await clearanceOf(noise, { objectId: object.id })).id)
    const patched = (await owner.agent.patch(`/api/objects/${object.id}`).send({ stray: { k: 8, n: 2 } }).expect(200)).body.object as SceneObject
    expect(patched.stray).toEqual({ k: 8, n: 2 })
    const read = (await owner.agent.get(`/api/objects/${object.id}/points`).expect(200)).body
    expect(read.stray.dropped).toBeGreaterThanOrEqual(12)
    const clean = await waitChecked(withStrays.id, withStrays.check.basedOn)
    console.info(`strays: margin with ${withStrays.check.value?.toFixed(4)}, dropped ${read.stray.dropped}: ${clean.check.value?.toFixed(4)} +- ${clean.check.expandedUncertainty?.toFixed(4)}`)
    expect(withStrays.check.value!).toBeLessThan(TRUE_MARGIN - withStrays.check.expandedUncertainty!)
    expect(Math.abs(clean.check.value! - TRUE_MARGIN)).toBeLessThanOrEqual(clean.check.expandedUncertainty!)
    // Exported, the object is its kept points: trims and stray points applied (PLY, float32 coordinates).
    const created = await owner.agent.post(`/api/scenes/${sceneId}/exports`).send({ format: 'ply', objectId: object.id }).expect(202)
    const done = await waitForExport(created.body.export.id)
    expect(done).toMatchObject({ status: 'ready', source: 'object', objectId: object.id, pointCount: read.kept })
    const ply = await readAll(new Uint8Array((await download(done.id)).body as Buffer), 'ply')
    let lowest = Infinity, widest = 0
    for (let i = 0; i < ply.positions.length; i += 3) (lowest = Math.min(lowest, ply.positions[i + 2]!)), (widest = Math.max(widest, ply.positions[i]!))
    expect(lowest).toBeGreaterThan(0.02 - 1e-6)
    expect(widest).toBeLessThan(W / 2 + 0.01)
    // Signed off, then a trim changes: back to open, with a revision saying why.
    await mentor.agent.put(`/api/markers/${clean.id}/review`).send({ state: 'signed-off' }).expect(200)
    await owner.agent.post(`/api/objects/${object.id}/trims`).send({ instanceId, ...keepBox }).expect(201)
    const reopened = (await owner.agent.get(`/api/markers/${clean.id}`).expect(200)).body.marker as Marker
    expect(reopened.review.state).toBe('open')
    const revisions = (await owner.agent.get(`/api/markers/${clean.id}/history`).expect(200)).body.revisions as { action: string; note: string | null }[]
    expect(revisions.at(-1)).toMatchObject({ action: 'reopened', note: expect.stringContaining('“box with strays”') })
    await waitChecked(clean.id, clean.check.basedOn)
  })

  it('a scene cut leaves a person walking past out of the section and of snapping, for everyone reading the placement', async () => {
    // The 0.90 m door with someone standing in it (a block 0.25 x 0.3 x 1.7 m at x 0.05..0.30, clear of the jamb).
    const walled = wallWithOpening({ width: 0.9, height: 2.0, thickness: 0.2, noise: 0.002, seed: 60 })
    const person = new SurfaceSampler(0.01, 0.002, 61)
    person.rect([0.05, -0.15, 0], Z, 1.7, Y, 0.3).rect([0.05, -0.15, 1.7], X, 0.25, Y, 0.3).rect([0.05, -0.15, 0], X, 0.25, Z, 1.7).rect([0.3, -0.15, 0], Y, 0.3, Z, 1.7)
    walled.xyz.push(...person.xyz)
    const shift = new Matrix4().makeTranslation(20, 0, 0).elements
    const wallId = await scanOf(walled, 'door-with-person', 0.002, shift)
    const anchor = (x: number) => ({ instanceId: wallId, x: 20 + x, y: 0, z: 1 })
    const section = await waitChecked((await post({ kind: 'section', anchors: [anchor(-0.45), anchor(0.45)], params: { plane: 'two-points', thickness: 0.1, opening: true } })).id)
    const blocked = resultOf(section.check, 'section')!.opening!.clearWidth
    // An anchor picked on the person's face snaps to it.
    const onPerson = await waitChecked((await post({ kind: 'distance', anchors: [{ instanceId: wallId, x: 20.051, y: 0, z: 1 }, anchor(-0.45)] })).id)
    expect(onPerson.check.anchors[0]!.residual!).toBeLessThan(0.01)
    // Cut the person out of the placement (scene frame in; a scene cut only cuts).
    await owner.agent.post(`/api/instances/${wallId}/trims`).send({ mode: 'cut', label: 'someone in the door', shape: { shape: 'box', centre: [20.175, 0, 0.96], size: [0.3, 0.36, 1.88] } }).expect(201)
    const cleared = await waitChecked(section.id, section.check.basedOn)
    const width = resultOf(cleared.check, 'section')!.opening!.clearWidth
    const U = resultOf(cleared.check, 'section')!.opening!.uncertainty.width
    console.info(`door with a person: clear width ${blocked.toFixed(3)} m; person cut: ${width.toFixed(4)} +- ${U.toFixed(4)} m`)
    expect(blocked).toBeLessThan(0.65)
    // Cut out, the person is as if never there: the same door scanned without them gives the same width within
    // U (the scans' spacing is estimated from all their points, so the two do not agree to the last digit).
    const emptyId = await scanOf(wallWithOpening({ width: 0.9, height: 2.0, thickness: 0.2, noise: 0.002, seed: 60 }), 'door-empty', 0.002, new Matrix4().makeTranslation(26, 0, 0).elements)
    const empty = await waitChecked((await post({ kind: 'section', anchors: [{ instanceId: emptyId, x: 25.55, y: 0, z: 1 }, { instanceId: emptyId, x: 26.45, y: 0, z: 1 }], params: { plane: 'two-points', thickness: 0.1, opening: true } })).id)
    expect(Math.abs(width - resultOf(empty.check, 'section')!.opening!.clearWidth)).toBeLessThanOrEqual(U)
    expect(Math.abs(width - 0.9)).toBeLessThanOrEqual(2 * U)
    // The same pick now snaps to the nearest point that counts (the floor or the jamb, far off), never to a cut point.
    const moved = await waitChecked(onPerson.id, onPerson.check.basedOn)
    expect(moved.check.anchors[0]!.residual!).toBeGreaterThan(0.1)
    const cuts = (await owner.agent.get(`/api/instances/${wallId}/trims`).expect(200)).body.trims as Trim[]
    expect(cuts.map((c) => c.label)).toEqual(['someone in the door'])
  })
})
