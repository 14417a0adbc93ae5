// Aligning stations through the API, on synthetic scans of known geometry made here (tests/utils/solids.ts:
// a wall with a doorway, its floor, five 100 mm sphere targets; 1 cm grids, 1 mm seeded noise along each
// surface's normal). The held scan is in the site frame; the moving one is the same site sampled with other
// noise and delivered in a station frame S, then placed at E S, a known error E off. Reference values: S and
// E themselves (three.js builds them, independently of the project's own matrix code), the solids' sphere
// centres, and tolerances derived from the noise as stated beside each check.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import { parse } from 'csv-parse/sync'
import { Euler, Matrix4, Vector3 } from 'three'
import type { Marker, Registration, RegistrationReport, Sheet } from '@shared/schemas'
import { WORK_MAPS } from '@shared/collab/documents'
import { liveClient } from '../utils/live'
import { upload, waitForScan } from '../utils/scans'
import { guestAgent, joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { wallWithOpening } from '../utils/solids'
import { waitChecked as waitCheckedBy } from '../utils/markers'

type V = [number, number, number]
const NOISE = 0.001
const R = 0.1
/** Sphere targets in the site frame, on stands in front of the wall (its faces at y = +-0.15). */
const SPHERES: V[] = [
  [-1.1, -0.6, 0.5],
  [1.0, -0.55, 1.6],
  [-0.9, -0.45, 2.3],
  [0.25, -0.8, 0.9],
  [1.15, -0.7, 0.35],
]
const deg = Math.PI / 180
/** The moving scan's station frame: its points are S^-1 p (site p), so S is where it belongs. */
const S = new Matrix4().makeRotationFromEuler(new Euler(2 * deg, -1 * deg, 35 * deg, 'ZYX')).setPosition(2.5, -3.0, 0.2)
/** The error it is placed with: 1.5 degrees about z, 0.4 about x, (50, -30, 20) mm. */
const E = new Matrix4().makeRotationFromEuler(new Euler(0.4 * deg, 0, 1.5 * deg, 'ZYX')).setPosition(0.05, -0.03, 0.02)
const placedAt = new Matrix4().multiplyMatrices(E, S)

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let mentor: Awaited<ReturnType<typeof signUpAgent>>
/** A viewing pass's holder (guests have no account). */
let guest: { agent: ReturnType<TestServer['agent']> }
let sceneId: string
let heldId: string
let movingId: string
let movingScanId: string

function site(seed: number) {
  const s = wallWithOpening({ width: 1.4, height: 2.1, noise: NOISE, seed })
  for (const c of SPHERES) s.sphere(c, R)
  return s
}

const apply = (m: Matrix4, p: readonly number[]): V => {
  const v = new Vector3(p[0], p[1], p[2]).applyMatrix4(m)
  return [v.x, v.y, v.z]
}
const add = (a: readonly number[], b: readonly number[]): V => [a[0]! + b[0]!, a[1]! + b[1]!, a[2]! + b[2]!]
const asXyz = (p: V) => ({ x: p[0], y: p[1], z: p[2] })
/** Where a site point shows on the moving placement as placed now (E S S^-1 p = E p). */
const onMoving = (p: V) => asXyz(apply(E, p))
const front = (c: V): V => add(c, [0, -R, 0])
const top = (c: V): V => add(c, [0, 0, R])

/** The five spheres as tie pairs (clicked on their front faces), the last one a check point. */
const spherePairs = (checkLast = true) =>
  SPHERES.map((c, i) => ({ moving: onMoving(front(c)), held: asXyz(front(c)), target: 'sphere' as const, checkPoint: checkLast && i === SPHERES.length - 1 }))

async function fit(body: object, agent = owner.agent, status = 201) {
  const res = await agent.post(`/api/scenes/${sceneId}/registrations/fit`).send({ movingInstanceId: movingId, heldInstanceId: heldId, sphereRadius: R, ...body })
  if (res.status !== status) throw new Error(`fit: ${res.status} ${JSON.stringify(res.body)}`)
  return res
}

async function waitRefined(id: string): Promise<Registration> {
  const deadline = Date.now() + 60_000
  for (;;) {
    const r = (await owner.agent.get(`/api/registrations/${id}`).expect(200)).body.registration as Registration
    if (r.refine && r.refine.status !== 'running') return r
    if (Date.now() > deadline) throw new Error(`refinement of ${id} still running: ${JSON.stringify(r.refine)}`)
    await new Promise((res) => setTimeout(res, 100))
  }
}

const waitChecked = (id: string, revisionAbove = 0) => waitCheckedBy(owner.agent, id, revisionAbove)

/** How far a placement matrix puts site points from where S puts them, at the sphere centres and the wall's corners, metres. */
function worstOffset(matrix: readonly number[]): number {
  const m = new Matrix4().fromArray(matrix as number[])
  const back = new Matrix4().multiplyMatrices(m, S.clone().invert())
  const probes: V[] = [...SPHERES, [-1.3, -0.15, 0], [1.3, -0.15, 2.6], [-1.3, 0.15, 2.6], [1.3, 0.6, 0]]
  return Math.max(...probes.map((p) => new Vector3(...apply(back, p)).distanceTo(new Vector3(...p))))
}

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Align Owner')
  mentor = await signUpAgent(t, 'Align Mentor')
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Align' }).expect(201)).body.project.id
  await joinProject(t, owner.agent, projectId, mentor, 'mentor')
  guest = { agent: (await guestAgent(t, owner.agent, projectId)).agent }
  const heldScan = (await upload(owner.agent, projectId, site(1).ply(), 'site.ply').expect(202)).body.scan.id
  movingScanId = (await upload(owner.agent, projectId, site(2).transformed(S.clone().invert().elements).ply(), 'station.ply').expect(202)).body.scan.id
  for (const id of [heldScan, movingScanId]) {
    const { scan } = await waitForScan(owner.agent, id, undefined, 120_000)
    expect(scan.status, scan.error ?? '').toBe('ready')
    await owner.agent.patch(`/api/scans/${id}`).send({ enteredUncertainty: NOISE }).expect(200)
  }
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Two stations' }).expect(201)).body.scene.id
  heldId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: heldScan }).expect(201)).body.instance.id
  movingId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: movingScanId, matrix: placedAt.elements }).expect(201)).body.instance.id
}, 240_000)

afterAll(async () => {
  await t?.stop()
})

describe('closed-form fit', () => {
  it('recovers the station pose from sphere-target centres within a tolerance derived from the noise, check point apart', async () => {
    const r = (await fit({ pairs: spherePairs() })).body.registration as Registration
    expect(r.state).toBe('draft')
    expect(r.fit!.count).toBe(4)
    expect(r.fit!.checkCount).toBe(1)
    // Each centre is fitted from n cap points with 1 mm noise along the radius: per axis about
    // sigma sqrt(3 / n) over a whole sphere (derived: J^T J = n/3 I); a cap is less balanced, so twice that.
    // A pair's difference has sqrt(2) of it; the fitted transform at a target is no worse than one pair: six
    // of those is the tolerance (derived; a millimetre bug is far outside it).
    const counts = r.pairs.flatMap((p) => [p.moving.sphere!.count, p.held.sphere!.count])
    const sigmaCentre = 2 * NOISE * Math.sqrt(3 / Math.min(...counts))
    const tolerance = 6 * Math.SQRT2 * sigmaCentre
    expect(Math.min(...counts)).toBeGreaterThan(100)
    expect(worstOffset(r.matrixAfter!)).toBeLessThan(tolerance)
    // The fitted sphere radius is the stated one, its RMS the noise (fixed-radius fit, Shakarji 1998).
    for (const p of r.pairs) for (const side of [p.moving, p.held]) expect(side.sphere!.rms).toBeLessThan(2 * NOISE)
    // Residuals: fit RMS over the 4 fitted pairs, the check point's apart (ASPRS Ed. 2 2023: RMS of the
    // fitted pairs shows consistency, the check point accuracy).
    expect(r.residuals!.count).toBe(4)
    expect(r.residuals!.checkCount).toBe(1)
    expect(r.residuals!.rms).toBeCloseTo(r.fit!.rms!, 12)
    expect(r.residuals!.checkRms).toBe(r.pairs[4]!.distance)
    expect(r.residuals!.checkRms!).toBeLessThan(tolerance)
    expect(r.fit!.rms!).toBeLessThan(tolerance)
    // The placement's RMS is the check points' (they exist); per axis RMS / sqrt(3) (derived: E|r|^2 = 3 s^2).
    expect(r.rmsSource).toBe('check-points')
    expect(r.rms).toBe(r.residuals!.checkRms)
    expect(r.registrationU).toBeCloseTo(r.residuals!.checkRms! / Math.sqrt(3), 15)
    // The correction undoes E: C = S (E S)^-1 = E^-1 (translation to the tolerance, plus the lever of its turn).
    const eInv = E.clone().invert().elements
    for (const i of [12, 13, 14]) expect(Math.abs(r.correction![i]! - eInv[i]!)).toBeLessThan(tolerance * 3)
  })

  it('snaps point tie pairs to stored points, reports the fitted RMS and its uncertainty rule without check points', async () => {
    // Clicks 3 mm off the surface (the sphere tops, seen from above): each side snaps to a stored point.
    const pairs = SPHERES.slice(0, 4).map((c) => ({ moving: onMoving(add(top(c), [0, 0, 0.003])), held: asXyz(add(top(c), [0, 0, 0.003])) }))
    const r = (await fit({ pairs })).body.registration as Registration
    for (const p of r.pairs) {
      expect(p.target).toBe('point')
      expect(p.moving.sphere).toBeNull()
      // The tie point is a stored point: the full-resolution search finds it at distance 0 (common practice).
      const near = (await owner.agent.get(`/api/scans/${movingScanId}/nearest`).query({ x: p.moving.local[0], y: p.moving.local[1], z: p.moving.local[2], k: 1 }).expect(200)).body.points[0]
      expect(near.distance).toBeLessThan(1e-9)
      expect(p.moving.distance).toBeGreaterThan(0.0015)
    }
    // Nearest grid points on the two samplings differ by up to about a spacing: the fit cannot be better.
    expect(r.fit!.rms!).toBeLessThan(0.02)
    expect(worstOffset(r.matrixAfter!)).toBeLessThan(0.03)
    expect(r.rmsSource).toBe('tie-points')
    // s^2 = sum |r|^2 / (3n - 6) (least squares: observations minus the 6 parameters; JCGM 100 H.3 does the same for a line).
    const n = r.fit!.count
    expect(r.registrationU).toBeCloseTo(Math.sqrt((n * r.fit!.rms! ** 2) / (3 * n - 6)), 15)
    expect(r.fit!.method).toBe('svd')
  })

  it('gives the same transform by Horn\'s quaternion method as by the SVD (Horn 1987; Arun et al. 1987)', async () => {
    const svd = (await fit({ pairs: spherePairs(false) })).body.registration as Registration
    const horn = (await fit({ pairs: spherePairs(false), method: 'horn' })).body.registration as Registration
    svd.correction!.forEach((v, i) => expect(horn.correction![i]).toBeCloseTo(v, 9))
    expect(horn.fit!.method).toBe('horn')
  })

  it('refuses bad input with 400 naming the field', async () => {
    const three = spherePairs(false).slice(0, 3)
    const err = async (body: object, field: string, message: RegExp) => {
      const res = await fit(body, owner.agent, 400)
      expect(res.body.error.field, JSON.stringify(res.body)).toBe(field)
      expect(res.body.error.message).toMatch(message)
    }
    await err({ pairs: three.slice(0, 2) }, 'pairs', /at least 3/)
    // Three pairs, one disabled and one a check point: one fit pair (check points do not count).
    await err({ pairs: three.map((p, i) => ({ ...p, enabled: i !== 0, checkPoint: i === 1 })) }, 'pairs', /at least 3/)
    // Three points on one line (the sphere tops of a row along x): the rotation about it is unknown.
    const line = [-0.8, 0, 0.8].map((x) => ({ moving: onMoving([x, -0.15, 2.4]), held: asXyz([x, -0.15, 2.4]) }))
    await err({ pairs: line }, 'pairs', /one line/)
    await err({ pairs: three, movingInstanceId: '00000000-0000-4000-8000-00000000abcd' }, 'movingInstanceId', /no placement/)
    await err({ pairs: three, heldInstanceId: movingId }, 'heldInstanceId', /another placement/)
    // A click half a metre in front of the wall: off the points.
    await err({ pairs: [...three.slice(0, 1), { ...three[1]!, held: asXyz([0, -0.8, 2.0]) }, three[2]] }, 'pairs.1.held', /from the nearest stored point/)
    // A sphere target asked for on the flat wall.
    await err({ pairs: [...three.slice(0, 2), { moving: onMoving([-1.2, -0.15, 1.5]), held: asXyz([-1.2, -0.15, 1.5]), target: 'sphere' }] }, 'pairs.2.moving', /no sphere target/)
    // The stated radius wrong by 27 %: the points bend like another sphere.
    await err({ pairs: three, sphereRadius: 0.0725 }, 'pairs.0.moving', /radius 10\d mm, not 72.5 mm/)
    await err({ pairs: three, method: 'best' }, 'method', /one of/)
  })

  it('refuses mentors and guests (shared/auth/roles.ts: aligning is for owners and measurers) but lets them read', async () => {
    for (const who of [mentor, guest]) {
      const res = await who.agent.post(`/api/scenes/${sceneId}/registrations/fit`).send({ movingInstanceId: movingId, heldInstanceId: heldId, pairs: spherePairs() })
      expect(res.status).toBe(403)
      expect((await who.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send({ movingInstanceId: movingId, heldInstanceId: heldId })).status).toBe(403)
      expect((await who.agent.get(`/api/scenes/${sceneId}/registrations`)).status).toBe(200)
    }
  })
})

describe('ICP refinement as a job', () => {
  it('refines the fit: RMS never increases, it converges, and lands on the station pose', { timeout: 90_000 }, async () => {
    const fitted = (await fit({ pairs: spherePairs() })).body.registration as Registration
    const started = await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send({ movingInstanceId: movingId, heldInstanceId: heldId, registrationId: fitted.id }).expect(202)
    expect(started.body.registration.refine.status).toBe('running')
    expect(started.body.registration.refine.startedFrom).toBe('fit')
    const r = await waitRefined(fitted.id)
    expect(r.refine!.status, r.refine!.reason ?? '').toBe('done')
    expect(r.refine!.converged).toBe(true)
    const rms = r.refine!.iterations.map((i) => i.rms)
    // Besl and McKay 1992: the error never increases from one iteration to the next.
    for (let i = 1; i < rms.length; i++) expect(rms[i]!).toBeLessThanOrEqual(rms[i - 1]!)
    // Point-to-plane RMS of two samplings with 1 mm noise each: about sqrt(2) x 1 mm (icp.ts header; derived).
    expect(r.refine!.finalRms!).toBeGreaterThan(0.8 * NOISE)
    expect(r.refine!.finalRms!).toBeLessThan(2.5 * NOISE)
    expect(r.refine!.overlap!).toBeGreaterThan(0.8)
    // From thousands of pairs the pose is better than a millimetre over the site (derived: 1.4 mm / sqrt(40 000)).
    expect(worstOffset(r.matrixAfter!)).toBeLessThan(0.001)
    expect(r.correction).toEqual(r.refine!.matrix)
    // Check points exist, so they stay the placement's figure, now under the refined transform.
    expect(r.rmsSource).toBe('check-points')
    expect(r.rms).toBe(r.residuals!.checkRms)
  })

  it('refines from the placement as it is, without tie points; a newer refinement in the scene replaces a running one', { timeout: 90_000 }, async () => {
    const body = { movingInstanceId: movingId, heldInstanceId: heldId, maxDistance: 0.2 }
    const first = (await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send(body).expect(202)).body.registration as Registration
    const second = (await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send(body).expect(202)).body.registration as Registration
    expect(second.refine!.startedFrom).toBe('placement')
    const done = await waitRefined(second.id)
    // Latest wins: the first was stopped (or had finished before the second began), and its draft dropped
    // as the same person's earlier draft for the placement.
    expect((await owner.agent.get(`/api/registrations/${first.id}`)).status).toBe(404)
    expect(done.refine!.status, done.refine!.reason ?? '').toBe('done')
    expect(done.refine!.converged).toBe(true)
    // From about 7 cm and 1.6 degrees off, ICP (Chen and Medioni 1992) converges to the known pose.
    expect(worstOffset(done.matrixAfter!)).toBeLessThan(0.001)
    expect(done.rmsSource).toBe('icp')
    expect(done.registrationU).toBe(done.refine!.finalRms)
    expect(done.pairs).toEqual([])
  })

  it('stops a running refinement when a newer one starts in the scene (latest wins)', { timeout: 90_000 }, async () => {
    // A second person, to refine in the same scene while the first refinement runs.
    const other = await signUpAgent(t, 'Align Second')
    const projectId = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.projectId
    await joinProject(t, owner.agent, projectId, other, 'measurer')
    const a = (await fit({ pairs: spherePairs() })).body.registration as Registration
    await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send({ movingInstanceId: movingId, heldInstanceId: heldId, registrationId: a.id }).expect(202)
    const b = (await other.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send({ movingInstanceId: movingId, heldInstanceId: heldId, maxDistance: 0.2 }).expect(202)).body.registration as Registration
    const [ra, rb] = [await waitRefined(a.id), await waitRefined(b.id)]
    expect(rb.refine!.status).toBe('done')
    if (ra.refine!.status === 'cancelled') expect(ra.refine!.reason).toMatch(/newer refinement/)
    // Or it had finished before the newer one began computing: never two at once in a scene.
    else expect(ra.refine!.finishedAt! <= rb.refine!.began!).toBe(true)
  })

  it('refines the same draft again while it runs: the newer run is the one that counts', { timeout: 90_000 }, async () => {
    const d = (await fit({ pairs: spherePairs() })).body.registration as Registration
    const body = { movingInstanceId: movingId, heldInstanceId: heldId, registrationId: d.id }
    const one = (await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send(body).expect(202)).body.registration as Registration
    const two = (await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send(body).expect(202)).body.registration as Registration
    expect(two.refine!.runId).not.toBe(one.refine!.runId)
    const done = await waitRefined(d.id)
    expect(done.refine!.runId).toBe(two.refine!.runId)
    expect(done.refine!.status).toBe('done')
  })
})

describe('accept and undo', () => {
  it('moves the placement (API and live document agree), re-checks its markers, puts the registration into cross-placement budgets, and undoes', { timeout: 120_000 }, async () => {
    // Markers before: one across the two placements, one on the moving placement alone.
    const cross = (await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', anchors: [{ instanceId: heldId, ...asXyz(top(SPHERES[1]!)) }, { instanceId: movingId, ...onMoving(top(SPHERES[2]!)) }] }).expect(201)).body.marker as Marker
    const same = (await owner.agent.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', anchors: [{ instanceId: movingId, ...onMoving(top(SPHERES[0]!)) }, { instanceId: movingId, ...onMoving(top(SPHERES[3]!)) }] }).expect(201)).body.marker as Marker
    for (const m of [cross, same]) expect(m.check.parts.some((p) => /registration/.test(p.name)), m.label).toBe(cross === m)
    const fitted = (await fit({ pairs: spherePairs() })).body.registration as Registration
    await owner.agent.post(`/api/scenes/${sceneId}/registrations/refine`).send({ movingInstanceId: movingId, heldInstanceId: heldId, registrationId: fitted.id }).expect(202)
    // Accepting while ICP runs is refused.
    const early = await owner.agent.post(`/api/registrations/${fitted.id}/accept`)
    const refined = await waitRefined(fitted.id)
    if (early.status !== 200) expect(early.status).toBe(409)
    else expect(early.body.registration.state).toBe('accepted')
    const accepted = early.status === 200 ? early.body.registration as Registration : ((await owner.agent.post(`/api/registrations/${fitted.id}/accept`).expect(200)).body.registration as Registration)
    expect(accepted.state).toBe('accepted')
    expect(accepted.acceptedBy!.name).toBe('Align Owner')
    // Mentors may not accept or undo.
    expect((await mentor.agent.post(`/api/registrations/${fitted.id}/undo`)).status).toBe(403)

    // The placement's matrix is the aligned one, in the API and in the work document.
    const instance = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances.find((i: { id: string }) => i.id === movingId)
    expect(instance.matrix).toEqual(accepted.matrixAfter)
    expect(worstOffset(instance.matrix)).toBeLessThan(0.001)
    const login = await supertest(t.url).post('/api/auth/sign-in').set('Origin', t.url).send({ email: owner.email, password: owner.password }).expect(200)
    const live = liveClient(t.url, String(login.headers['set-cookie']![0]).split(';')[0]!, sceneId)
    try {
      await new Promise<void>((resolve) => (live.provider.synced ? resolve() : live.provider.once('sync', () => resolve())))
      const entry = live.doc.getMap<{ matrix: number[] }>(WORK_MAPS.instances).get(movingId)
      expect(entry!.matrix).toEqual(accepted.matrixAfter)
    } finally {
      live.provider.destroy()
      live.doc.destroy()
    }

    // Both markers are checked again; the cross one lists each anchor's registration: 0 on the held
    // placement (the reference), the accepted figure's per-axis u on the moving one. The same-placement
    // one has none: it cancels (common practice: a shared registration error cancels in a distance).
    const crossAfter = await waitChecked(cross.id, cross.check.basedOn)
    const sameAfter = await waitChecked(same.id, same.check.basedOn)
    expect(crossAfter.check.parts.filter((p) => /registration/.test(p.name))).toEqual([
      { name: 'A registration', u: 0 },
      { name: 'B registration', u: accepted.registrationU },
    ])
    expect(accepted.registrationU!).toBeGreaterThan(0)
    expect(sameAfter.check.parts.some((p) => /registration/.test(p.name))).toBe(false)
    // GUM 5.1: the distance's u is the quadrature sum of its anchors' parts.
    expect(crossAfter.check.standardUncertainty!).toBeCloseTo(Math.hypot(...crossAfter.check.parts.map((p) => p.u)), 12)
    // The marker's anchor moved with its placement: the sphere tops now sit where they do on the site (a
    // snap away, within a spacing).
    const moved = crossAfter.anchors[1]!, want = top(SPHERES[2]!)
    expect(Math.hypot(moved.x - want[0], moved.y - want[1], moved.z - want[2])).toBeLessThan(0.002)

    // The sheet and the report show the accepted RMS.
    const sheet = (await guest.agent.get(`/api/scenes/${sceneId}/sheet`).expect(200)).body.sheet as Sheet
    const row = sheet.scans.find((s) => s.placementId === movingId)!
    expect(row.registrationRms).toBe(accepted.rms)
    expect(row.registrationSource).toBe('check-points')
    expect(sheet.scans.find((s) => s.placementId === heldId)!.registrationRms).toBeNull()
    // And its CSV of the scans used, read back by csv-parse (npm registry).
    const csvRows = parse((await guest.agent.get(`/api/scenes/${sceneId}/sheet.csv?table=scans`).expect(200)).text, { columns: true }) as Record<string, string>[]
    expect(csvRows.find((r) => r.placement_id === movingId)).toMatchObject({ registration_rms: String(accepted.rms), registration_source: 'check-points', registration_moved_since: 'no' })
    expect(csvRows.find((r) => r.placement_id === heldId)!.registration_rms).toBe('')
    const report = (await guest.agent.get(`/api/scenes/${sceneId}/registrations`).expect(200)).body as RegistrationReport
    expect(report.placements.find((p) => p.instanceId === movingId)).toMatchObject({ registrationId: accepted.id, rms: accepted.rms, movedSince: false })
    expect(report.registrations[0]!.id).toBe(accepted.id)
    expect(report.registrations.every((r) => r.state !== 'draft')).toBe(true)
    // The held placement moved after the fit: the two no longer agree as the fit found them, so the moving
    // one counts as not aligned; put back, the registration holds again.
    const heldNow = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances.find((i: { id: string }) => i.id === heldId).matrix as number[]
    const heldNudged = [...heldNow]
    heldNudged[13] = heldNudged[13]! + 0.02
    const sameHeldBefore = (await owner.agent.get(`/api/markers/${same.id}`).expect(200)).body.marker as Marker
    await owner.agent.patch(`/api/instances/${heldId}`).send({ matrix: heldNudged }).expect(200)
    // The moving placement's own markers are checked again (its registration term changed), keeping their value.
    const sameHeldMoved = await waitChecked(same.id, sameHeldBefore.check.basedOn)
    expect(sameHeldMoved.check.value).toBeCloseTo(sameHeldBefore.check.value!, 12)
    const stale = (await guest.agent.get(`/api/scenes/${sceneId}/registrations`).expect(200)).body as RegistrationReport
    expect(stale.placements.find((p) => p.instanceId === movingId)).toMatchObject({ registrationId: null, movedSince: true })
    expect((await guest.agent.get(`/api/scenes/${sceneId}/sheet`).expect(200)).body.sheet.scans.find((x: { placementId: string }) => x.placementId === movingId)).toMatchObject({ registrationRms: null, registrationMovedSince: true })
    await owner.agent.patch(`/api/instances/${heldId}`).send({ matrix: heldNow }).expect(200)
    const back = (await guest.agent.get(`/api/scenes/${sceneId}/registrations`).expect(200)).body as RegistrationReport
    expect(back.placements.find((p) => p.instanceId === movingId)).toMatchObject({ registrationId: accepted.id, movedSince: false })
    // Accepting twice is refused.
    expect((await owner.agent.post(`/api/registrations/${accepted.id}/accept`)).status).toBe(409)
    expect(refined.id).toBe(accepted.id)

    // Undo: the earlier matrix comes back as a change of its own and a record of its own.
    const undo = (await owner.agent.post(`/api/registrations/${accepted.id}/undo`).expect(201)).body.registration as Registration
    expect(undo.kind).toBe('undo')
    expect(undo.undoesId).toBe(accepted.id)
    expect(undo.matrixAfter).toEqual(accepted.matrixBefore)
    const restored = (await owner.agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances.find((i: { id: string }) => i.id === movingId)
    expect(restored.matrix).toEqual(placedAt.elements.map((v) => expect.closeTo(v, 12)))
    expect((await owner.agent.get(`/api/registrations/${accepted.id}`).expect(200)).body.registration.state).toBe('undone')
    expect((await owner.agent.post(`/api/registrations/${accepted.id}/undo`)).status).toBe(409)
    const crossBack = await waitChecked(cross.id, crossAfter.check.basedOn)
    expect(crossBack.check.parts.filter((p) => /registration/.test(p.name))).toEqual([
      { name: 'A registration', u: 0 },
      { name: 'B registration', u: 0 },
    ])
    const after = (await guest.agent.get(`/api/scenes/${sceneId}/registrations`).expect(200)).body as RegistrationReport
    expect(after.registrations.slice(0, 2).map((r) => [r.kind, r.state])).toEqual([
      ['undo', 'accepted'],
      ['fit', 'undone'],
    ])
    expect(after.placements.find((p) => p.instanceId === movingId)!.registrationId).toBeNull()
  })

  it('refuses to accept a fit once the placement has moved since', async () => {
    const r = (await fit({ pairs: spherePairs() })).body.registration as Registration
    const nudged = [...placedAt.elements]
    nudged[12] = nudged[12]! + 0.01
    await owner.agent.patch(`/api/instances/${movingId}`).send({ matrix: nudged }).expect(200)
    const res = await owner.agent.post(`/api/registrations/${r.id}/accept`).expect(409)
    expect(res.body.error.message).toMatch(/moved since/)
    await owner.agent.patch(`/api/instances/${movingId}`).send({ matrix: placedAt.elements }).expect(200)
  })
})
