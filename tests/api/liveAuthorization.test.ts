// The live documents' authorization walk, generated from the registry of live operations
// (shared/collab/operations.ts) as tests/api/authorization.test.ts is from the route registry: every
// operation x every role of shared/auth/roles.ts (owner, measurer, mentor, a guest through a real viewing
// pass, a signed-in outsider, an anonymous caller) x the target (this scene, another scene of the same
// project, another project's scene). Each case ends one of three ways: refused at the upgrade (its close
// code), refused and closed (its code; PostgreSQL and the other clients' documents unchanged), or applied
// (seen in PostgreSQL and by another client). An operation added to the registry without a case here fails
// the walk. Then the events that take a right away from an open socket (roles bind open sockets), and the
// attacks that were tried for real (an outsider deleting another project's marker; a removed member
// deleting one).
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import supertest from 'supertest'
import * as Y from 'yjs'
import * as syncProtocol from 'y-protocols/sync'
import * as encoding from 'lib0/encoding'
import * as decoding from 'lib0/decoding'
import { can, type Role } from '@shared/auth/roles'
import { CLOSE_CODES, RECORD_MAPS, WORK_MAPS, type CloseCodeName } from '@shared/collab/documents'
import { LIVE_OPERATIONS, type LiveOperationName } from '@shared/collab/operations'
import { liveClient, synced, type LiveClient } from '../utils/live'
import { guestAgent, joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
type Agent = Awaited<ReturnType<typeof signUpAgent>>
const WALK_ROLES = ['owner', 'measurer', 'mentor', 'guest', 'outsider', 'anonymous'] as const
type WalkRole = (typeof WALK_ROLES)[number]
const TARGETS = ['this scene', 'another scene of the project', 'another project’s scene'] as const
type Target = (typeof TARGETS)[number]

interface Place {
  projectId: string
  sceneId: string
  scanId: string
  instanceId: string
}
const people = {} as Record<'owner' | 'measurer' | 'mentor' | 'outsider' | 'stranger', Agent>
const cookies = {} as Record<WalkRole, string | null>
const places = {} as Record<Target, Place>
const open: LiveClient[] = []
/** An owner's connection to this scene's work document, open through the walk: what other clients see. */
let observer: LiveClient

const uuid = () => crypto.randomUUID()
const IDENTITY = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
const shifted = (x: number) => [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, x, 0, 0, 1]

async function cookieOf(person: Agent): Promise<string> {
  const res = await supertest(t.url).post('/api/auth/sign-in').set('Origin', t.url).send({ email: person.email, password: person.password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}

/** A project with a scene and a ready scan placed in it (no worker here: the scan is marked ready by hand). */
async function project(owner: Agent, name: string): Promise<Place> {
  const projectId = (await owner.agent.post('/api/projects').send({ name }).expect(201)).body.project.id as string
  return { projectId, ...(await scene(owner, projectId)) }
}

async function scene(owner: Agent, projectId: string): Promise<Omit<Place, 'projectId'>> {
  const sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Walk scene' }).expect(201)).body.scene.id as string
  const scan = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'walk.xyz').expect(202)
  await t.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', scan.body.scan.id).execute()
  const instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id as string
  return { sceneId, scanId: scan.body.scan.id, instanceId }
}

async function addMember(owner: Agent, projectId: string, person: Agent, role: 'measurer' | 'mentor'): Promise<void> {
  await joinProject(t, owner.agent, projectId, person, role)
}

const ownerOf = (target: Target) => (target === 'another project’s scene' ? people.stranger : people.owner)

async function marker(target: Target, label = 'walk marker'): Promise<string> {
  const p = places[target]
  const res = await ownerOf(target)
    .agent.post(`/api/scenes/${p.sceneId}/markers`)
    .send({ kind: 'distance', label, anchors: [{ instanceId: p.instanceId, x: 0, y: 0, z: 0 }, { instanceId: p.instanceId, x: 1, y: 0, z: 0 }] })
    .expect(201)
  return res.body.marker.id as string
}

async function object(target: Target): Promise<string> {
  const p = places[target]
  return (await ownerOf(target).agent.post(`/api/scenes/${p.sceneId}/objects`).send({ name: 'walk object', members: [p.instanceId] }).expect(201)).body.object.id as string
}

async function sceneCut(target: Target): Promise<string> {
  const p = places[target]
  return (await ownerOf(target).agent.post(`/api/instances/${p.instanceId}/trims`).send({ mode: 'cut', shape: { shape: 'below', point: [0, 0, -5] } }).expect(201)).body.trim.id as string
}

/** A scene cut's work-document entry (placement frame): everything below z = -5. */
const cutEntry = (instanceId: string, label: string | null) => ({ instanceId, objectId: null, mode: 'cut', label, shape: { shape: 'below', point: [0, 0, -5], up: [0, 0, 1] } })

const entry = (instanceId: string, label: string) => ({ kind: 'distance', label, anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 2, y: 0, z: 0 }], params: {} })

type Outcome = { synced: true } | { code: number; reason: string }

/** Opens a live client; `outcome` settles on its first sync, or on its close (reconnecting is turned off then). */
function connect(cookie: string | null, path: string): { c: LiveClient; outcome: Promise<Outcome>; closed: Promise<{ code: number; reason: string }> } {
  const c = liveClient(t.url, cookie, path)
  open.push(c)
  const closed = new Promise<{ code: number; reason: string }>((resolve) =>
    c.provider.on('connection-close', (event: CloseEvent | null) => {
      c.provider.shouldConnect = false
      resolve({ code: event?.code ?? -1, reason: String(event?.reason ?? '') })
    }),
  )
  return { c, outcome: Promise.race([synced(c.provider).then(() => ({ synced: true }) as const), closed]), closed }
}

async function until(check: () => boolean | Promise<boolean>, ms = 5000, what = 'condition'): Promise<void> {
  const end = Date.now() + ms
  while (!(await check())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 20))
  }
}

const db = () => t.server.services.db
const markerRow = (id: string) => db().selectFrom('markers').select(['id', 'scene_id', 'label']).where('id', '=', id).executeTakeFirst()
const objectRow = (id: string) => db().selectFrom('scene_objects').select(['id', 'name']).where('id', '=', id).executeTakeFirst()
const trimRow = (id: string) => db().selectFrom('trims').select(['id', 'label']).where('id', '=', id).executeTakeFirst()
const instanceRow = (id: string) => db().selectFrom('scene_instances').select(['id', 'matrix']).where('id', '=', id).executeTakeFirst()

beforeAll(async () => {
  t = await startTestServer()
  for (const who of ['owner', 'measurer', 'mentor', 'outsider', 'stranger'] as const) people[who] = await signUpAgent(t, `Walk ${who}`)
  places['this scene'] = await project(people.owner, 'Walk')
  places['another scene of the project'] = { projectId: places['this scene'].projectId, ...(await scene(people.owner, places['this scene'].projectId)) }
  places['another project’s scene'] = await project(people.stranger, 'Elsewhere')
  await addMember(people.owner, places['this scene'].projectId, people.measurer, 'measurer')
  await addMember(people.owner, places['this scene'].projectId, people.mentor, 'mentor')
  for (const who of ['owner', 'measurer', 'mentor', 'outsider'] as const) cookies[who] = await cookieOf(people[who])
  cookies.guest = (await guestAgent(t, people.owner.agent, places['this scene'].projectId)).cookie
  cookies.anonymous = null
  observer = connect(cookies.owner, places['this scene'].sceneId).c
  await synced(observer.provider)
})
afterAll(async () => {
  for (const c of open) c.provider.destroy()
  await t?.stop()
})

/** What the registry says a case must end with. */
type Expected = { at: 'upgrade'; code: CloseCodeName } | { at: 'closed'; code: CloseCodeName } | { at: 'applied' }

function expected(op: LiveOperationName, role: WalkRole, target: Target): Expected {
  const def = LIVE_OPERATIONS[op]
  if (role === 'anonymous') return { at: 'upgrade', code: 'unauthenticated' }
  if (role === 'outsider') return { at: 'upgrade', code: 'forbidden' }
  if (def.kind === 'open') return target === 'another project’s scene' ? { at: 'upgrade', code: 'forbidden' } : { at: 'applied' }
  const writable = def.document === 'work' && can(role as Role, 'editMarkers')
  if (!writable || def.right === null || !can(role as Role, def.right)) return { at: 'closed', code: 'readOnly' }
  if ('refused' in def) return { at: 'closed', code: 'refused' }
  return target === 'this scene' ? { at: 'applied' } : { at: 'closed', code: 'refused' }
}

/**
 * One case of an operation: what it writes into the document of this scene (naming the target's ids), and
 * how to tell whether it took effect, in PostgreSQL and in another client's document.
 */
interface Case {
  /** Prepares fixtures (fresh ids) before any socket opens. */
  prepare(target: Target): Promise<void>
  /** The document to open: this scene's work document unless said. */
  path?(): string
  /** Makes the change in the client's document (each call to doc.transact is one update on the wire). */
  act(doc: Y.Doc): void
  /** Did it reach PostgreSQL (or the server's document, for what PostgreSQL does not hold)? */
  stored(): Promise<boolean>
  /** Does the observer's document show it? */
  seen(doc: Y.Doc): boolean
}

type CaseMaker = (target: Target, role: WalkRole) => Case

const work = () => places['this scene'].sceneId

const CASES: Record<LiveOperationName, CaseMaker> = {
  openWork: (target) => ({ prepare: async () => {}, path: () => places[target].sceneId, act: () => {}, stored: async () => true, seen: () => true }),
  openRecord: (target) => ({ prepare: async () => {}, path: () => `${places[target].sceneId}/record`, act: () => {}, stored: async () => true, seen: () => true }),
  markerCreate: (target) => {
    // A new marker in this scene whose anchors name the target's placement.
    const id = uuid()
    return {
      prepare: async () => {},
      act: (doc) => doc.getMap(WORK_MAPS.markers).set(id, entry(places[target].instanceId, 'created live')),
      stored: async () => (await markerRow(id)) !== undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.markers).has(id),
    }
  },
  markerUpdate: (target, role) => {
    let id = ''
    const label = `renamed by the ${role}`
    return {
      prepare: async () => void (id = await marker(target)),
      act: (doc) => doc.getMap(WORK_MAPS.markers).set(id, entry(places['this scene'].instanceId, label)),
      stored: async () => (await markerRow(id))?.label === label,
      seen: (doc) => (doc.getMap(WORK_MAPS.markers).get(id) as { label?: string } | undefined)?.label === label,
    }
  },
  markerDelete: (target) => {
    let id = ''
    return {
      prepare: async () => void (id = await marker(target)),
      act: (doc) => {
        const map = doc.getMap(WORK_MAPS.markers)
        // Another scene's id is not in this document: set it first, then delete it (the outsider's way).
        if (!map.has(id)) doc.transact(() => map.set(id, entry(places[target].instanceId, 'taken')))
        doc.transact(() => map.delete(id))
      },
      stored: async () => (await markerRow(id)) === undefined,
      // This scene's: gone for the others too. Another scene's: its id never shows up here.
      seen: (doc) => doc.getMap(WORK_MAPS.markers).has(id) === (target !== 'this scene'),
    }
  },
  placementMove: (target, role) => {
    let id = ''
    const matrix = shifted(WALK_ROLES.indexOf(role) + 1)
    return {
      // Each mover its own placement of this scene (two moving one at once would race).
      prepare: async () => {
        id = target === 'this scene' ? (await people.owner.agent.post(`/api/scenes/${work()}/instances`).send({ scanId: places[target].scanId }).expect(201)).body.instance.id : places[target].instanceId
      },
      act: (doc) => doc.getMap(WORK_MAPS.instances).set(id, { scanId: places[target].scanId, matrix, visible: true, color: '#7FA8CC' }),
      stored: async () => JSON.stringify((await instanceRow(id))?.matrix) === JSON.stringify(matrix),
      seen: (doc) => JSON.stringify((doc.getMap(WORK_MAPS.instances).get(id) as { matrix?: number[] } | undefined)?.matrix) === JSON.stringify(matrix),
    }
  },
  placementAdd: (target) => {
    const id = uuid()
    return {
      prepare: async () => {},
      act: (doc) => doc.getMap(WORK_MAPS.instances).set(id, { scanId: places[target].scanId, matrix: IDENTITY, visible: true, color: '#7FA8CC' }),
      stored: async () => (await instanceRow(id)) !== undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.instances).has(id),
    }
  },
  placementRemove: (target) => {
    const id = () => places[target].instanceId
    return {
      prepare: async () => {},
      act: (doc) => {
        const map = doc.getMap(WORK_MAPS.instances)
        if (!map.has(id())) doc.transact(() => map.set(id(), { scanId: places[target].scanId, matrix: IDENTITY, visible: true, color: '#7FA8CC' }))
        doc.transact(() => map.delete(id()))
      },
      stored: async () => (await instanceRow(id())) === undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.instances).has(id()) === (target !== 'this scene'),
    }
  },
  objectCreate: (target) => {
    const id = uuid()
    return {
      prepare: async () => {},
      act: (doc) => doc.getMap(WORK_MAPS.objects).set(id, { name: 'made live', members: [places[target].instanceId], stray: null }),
      stored: async () => (await objectRow(id)) !== undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.objects).has(id),
    }
  },
  objectUpdate: (target, role) => {
    let id = ''
    const name = `renamed by the ${role}`
    return {
      prepare: async () => void (id = await object(target)),
      act: (doc) => doc.getMap(WORK_MAPS.objects).set(id, { name, members: [places['this scene'].instanceId], stray: null }),
      stored: async () => (await objectRow(id))?.name === name,
      seen: (doc) => (doc.getMap(WORK_MAPS.objects).get(id) as { name?: string } | undefined)?.name === name,
    }
  },
  objectDelete: (target) => {
    let id = ''
    return {
      prepare: async () => void (id = await object(target)),
      act: (doc) => {
        const map = doc.getMap(WORK_MAPS.objects)
        if (!map.has(id)) doc.transact(() => map.set(id, { name: 'taken', members: [places[target].instanceId], stray: null }))
        doc.transact(() => map.delete(id))
      },
      stored: async () => (await objectRow(id)) === undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.objects).has(id) === (target !== 'this scene'),
    }
  },
  trimCreate: (target) => {
    const id = uuid()
    return {
      prepare: async () => {},
      act: (doc) => doc.getMap(WORK_MAPS.trims).set(id, cutEntry(places[target].instanceId, null)),
      stored: async () => (await trimRow(id)) !== undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.trims).has(id),
    }
  },
  trimUpdate: (target, role) => {
    let id = ''
    const label = `relabelled by the ${role}`
    return {
      prepare: async () => void (id = await sceneCut(target)),
      act: (doc) => doc.getMap(WORK_MAPS.trims).set(id, cutEntry(places[target].instanceId, label)),
      stored: async () => (await trimRow(id))?.label === label,
      seen: (doc) => (doc.getMap(WORK_MAPS.trims).get(id) as { label?: string } | undefined)?.label === label,
    }
  },
  trimDelete: (target) => {
    let id = ''
    return {
      prepare: async () => void (id = await sceneCut(target)),
      act: (doc) => {
        const map = doc.getMap(WORK_MAPS.trims)
        if (!map.has(id)) doc.transact(() => map.set(id, cutEntry(places[target].instanceId, 'taken')))
        doc.transact(() => map.delete(id))
      },
      stored: async () => (await trimRow(id)) === undefined,
      seen: (doc) => doc.getMap(WORK_MAPS.trims).has(id) === (target !== 'this scene'),
    }
  },
  writeMeta: () => ({
    prepare: async () => {},
    act: (doc) => doc.getMap(WORK_MAPS.meta).set('version', 99),
    stored: async () => (await t.server.collab.room(work(), 'work')).doc.getMap(WORK_MAPS.meta).get('version') === 99,
    seen: (doc) => doc.getMap(WORK_MAPS.meta).get('version') === 99,
  }),
  writeUnknown: (target, role) => {
    const name = `extra-${role}-${TARGETS.indexOf(target)}`
    return {
      prepare: async () => {},
      act: (doc) => doc.getArray(name).push(['anything']),
      stored: async () => (await t.server.collab.room(work(), 'work')).doc.share.has(name),
      seen: (doc) => doc.getArray(name).length > 0,
    }
  },
  writeRecord: (target) => {
    let id = ''
    return {
      prepare: async () => void (id = await marker(target)),
      path: () => `${work()}/record`,
      act: (doc) => doc.getMap(RECORD_MAPS.markers).set(id, { revision: 99, forged: true }),
      stored: async () => ((await t.server.collab.room(work(), 'record')).doc.getMap(RECORD_MAPS.markers).get(id) as { forged?: boolean } | undefined)?.forged === true,
      seen: () => false,
    }
  },
}

interface Run {
  name: string
  expect: Expected
  got: { at: Expected['at']; code?: number; reason?: string; stored: boolean; seen: boolean }
}

async function runCase(op: LiveOperationName, role: WalkRole, target: Target, c: Case): Promise<Run['got']> {
  const path = c.path?.() ?? work()
  const { c: client, outcome, closed } = connect(cookies[role], path)
  const first = await outcome
  if (!('synced' in first)) return { at: 'upgrade', code: first.code, reason: first.reason, stored: false, seen: false }
  if (LIVE_OPERATIONS[op].kind === 'open') {
    client.provider.destroy()
    return { at: 'applied', stored: true, seen: true }
  }
  c.act(client.doc)
  // Either the server closes the socket, or the change reaches PostgreSQL and the observer.
  const applied = until(async () => (await c.stored()) && c.seen(observer.doc), 5000, `${op} by the ${role} to be applied`).then(() => 'applied' as const)
  const result = await Promise.race([closed, applied.catch(() => 'timeout' as const)])
  client.provider.destroy()
  if (result === 'applied') return { at: 'applied', stored: true, seen: true }
  if (result === 'timeout') return { at: 'applied', code: -2, stored: await c.stored(), seen: c.seen(observer.doc) }
  return { at: 'closed', code: result.code, reason: result.reason, stored: await c.stored(), seen: c.seen(observer.doc) }
}

describe('the live authorization walk', () => {
  it('has a case for every live operation in the registry', () => {
    expect(Object.keys(CASES).sort()).toEqual(Object.keys(LIVE_OPERATIONS).sort())
  })

  it('decides every operation x role x target as the registry says', async () => {
    const plan: { op: LiveOperationName; role: WalkRole; target: Target; c: Case }[] = []
    for (const op of Object.keys(LIVE_OPERATIONS) as LiveOperationName[])
      for (const role of WALK_ROLES) for (const target of TARGETS) plan.push({ op, role, target, c: CASES[op](target, role) })
    // Fixtures first (a few at a time), then the sockets, several at once.
    for (let i = 0; i < plan.length; i += 8) await Promise.all(plan.slice(i, i + 8).filter((p) => expected(p.op, p.role, p.target).at !== 'upgrade').map((p) => p.c.prepare(p.target)))
    const runs: Run[] = []
    let next = 0
    await Promise.all(
      Array.from({ length: 12 }, async () => {
        while (next < plan.length) {
          const { op, role, target, c } = plan[next++]!
          runs.push({ name: `${op} by the ${role} on ${target}`, expect: expected(op, role, target), got: await runCase(op, role, target, c) })
        }
      }),
    )
    const wrong = runs.filter(({ expect: e, got }) => {
      if (e.at !== got.at) return true
      if (e.at === 'applied') return !got.stored || !got.seen
      // Refused: with its code, and nothing of it in PostgreSQL or in the other client's document.
      return got.code !== CLOSE_CODES[e.code] || got.stored || got.seen
    })
    expect(wrong.map((r) => `${r.name}: expected ${JSON.stringify(r.expect)}, got ${JSON.stringify(r.got)}`)).toEqual([])
    expect(runs).toHaveLength(Object.keys(LIVE_OPERATIONS).length * WALK_ROLES.length * TARGETS.length)
  }, 60_000)
})

describe('roles bind open sockets', () => {
  /** A fresh measurer of this scene's project, signed in, with an open, synced work-document client. */
  async function measurerOnline(projectId = places['this scene'].projectId, sceneId = work()) {
    const person = await signUpAgent(t, 'Walk short-lived')
    await addMember(people.owner, projectId, person, 'measurer')
    const cookie = await cookieOf(person)
    const live = connect(cookie, sceneId)
    expect(await live.outcome).toEqual({ synced: true })
    return { person, cookie, ...live }
  }

  /** The event, then at once a new marker written live: closed within a second with the code, and not stored. */
  async function cutOff(
    live: Awaited<ReturnType<typeof measurerOnline>>,
    event: () => Promise<unknown>,
    code: CloseCodeName,
    instanceId = places['this scene'].instanceId,
  ): Promise<{ reason: string }> {
    await event()
    const after = Date.now()
    const id = uuid()
    live.c.doc.getMap(WORK_MAPS.markers).set(id, entry(instanceId, 'written after'))
    const closed = await live.closed
    expect(Date.now() - after).toBeLessThan(1000)
    expect(closed.code).toBe(CLOSE_CODES[code])
    await new Promise((r) => setTimeout(r, 150))
    expect(await markerRow(id)).toBeUndefined()
    return closed
  }

  it('a member removed: closed (access ended), and nothing sent after is applied', async () => {
    const live = await measurerOnline()
    const closed = await cutOff(live, () => people.owner.agent.delete(`/api/projects/${places['this scene'].projectId}/members/${live.person.user.id}`).expect(204), 'accessEnded')
    expect(closed.reason).toMatch(/no longer a member/)
  })

  it('signing out closes that session’s sockets (signed out)', async () => {
    const live = await measurerOnline()
    await cutOff(live, () => supertest(t.url).post('/api/auth/sign-out').set('Origin', t.url).set('Cookie', live.cookie).expect(204), 'signedOut')
  })

  it('a password change closes every socket of the account (signed out)', async () => {
    const live = await measurerOnline()
    const closed = await cutOff(live, () => live.person.agent.post('/api/me/password').send({ currentPassword: live.person.password, newPassword: 'another horse battery' }).expect(204), 'signedOut')
    expect(closed.reason).toMatch(/password/)
  })

  it('a password reset closes every socket of the account (signed out)', async () => {
    const live = await measurerOnline()
    const since = new Date()
    await supertest(t.url).post('/api/auth/password-reset').set('Origin', t.url).send({ email: live.person.email }).expect(202)
    const link = (await t.waitForMail(live.person.email, since)).links.find((l) => l.includes('/reset-password#token='))!
    const token = new URLSearchParams(new URL(link).hash.slice(1)).get('token')
    const closed = await cutOff(live, () => supertest(t.url).post('/api/auth/password-reset/confirm').set('Origin', t.url).send({ token, password: 'a third horse battery' }).expect(200), 'signedOut')
    expect(closed.reason).toMatch(/reset/)
  })

  it('deleting the project closes everyone’s sockets on its scenes (access ended)', async () => {
    const p = await project(people.owner, 'Short-lived')
    const live = await measurerOnline(p.projectId, p.sceneId)
    const closed = await cutOff(live, () => people.owner.agent.delete(`/api/projects/${p.projectId}`).expect(204), 'accessEnded', p.instanceId)
    expect(closed.reason).toMatch(/deleted/)
  })

  it('deleting a scene closes everyone’s sockets on it (access ended)', async () => {
    const p = await scene(people.owner, places['this scene'].projectId)
    const live = await measurerOnline(places['this scene'].projectId, p.sceneId)
    const closed = await cutOff(live, () => people.owner.agent.delete(`/api/scenes/${p.sceneId}`).expect(204), 'accessEnded', p.instanceId)
    expect(closed.reason).toMatch(/scene was deleted/)
  })

  it('a role change closes with "role changed", and the reconnected socket holds the new role', async () => {
    const live = await measurerOnline()
    await cutOff(live, () => people.owner.agent.patch(`/api/projects/${places['this scene'].projectId}/members/${live.person.user.id}`).send({ role: 'mentor' }).expect(200), 'roleChanged')
    // Reconnected (a new page load would do the same): now a mentor, read-only.
    const again = connect(live.cookie, work())
    expect(await again.outcome).toEqual({ synced: true })
    again.c.doc.getMap(WORK_MAPS.markers).set(uuid(), entry(places['this scene'].instanceId, 'as a mentor now'))
    expect((await again.closed).code).toBe(CLOSE_CODES.readOnly)
  })

  it('applies nothing a connection sends once the event has happened, even before its socket has closed', async () => {
    const live = await measurerOnline()
    const room = await t.server.collab.room(work(), 'work')
    const conn = [...room.connections.values()].find((c) => c.userId === live.person.user.id)!
    // An update as the client would send it, handed to the room in the same turn as the removal.
    const doc = new Y.Doc()
    Y.applyUpdate(doc, Y.encodeStateAsUpdate(room.doc))
    const id = uuid()
    const before = Y.encodeStateVector(doc)
    doc.getMap(WORK_MAPS.markers).set(id, entry(places['this scene'].instanceId, 'raced the removal'))
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, 0)
    syncProtocol.writeUpdate(encoder, Y.encodeStateAsUpdate(doc, before))
    await t.server.services.db.deleteFrom('memberships').where('user_id', '=', live.person.user.id).execute()
    t.server.services.live.membershipChanged(places['this scene'].projectId, live.person.user.id, null)
    await room.receive(conn, encoding.toUint8Array(encoder))
    await room.flushed()
    expect(room.doc.getMap(WORK_MAPS.markers).has(id)).toBe(false)
    expect(await markerRow(id)).toBeUndefined()
    expect((await live.closed).code).toBe(CLOSE_CODES.accessEnded)
  })
})

describe('the attacks that were tried', () => {
  it('an outsider, from a scene of their own, cannot delete another project’s marker by naming its id', async () => {
    const own = await project(people.outsider, 'Outsider’s own')
    const victim = await marker('this scene', 'someone else’s')
    await people.owner.agent.post(`/api/markers/${victim}/comments`).send({ body: 'A thread that must survive.' }).expect(201)
    const cookie = await cookieOf(people.outsider)
    // Set the foreign id as a key, then delete it, as two updates (refused at the first, socket closed).
    const a = connect(cookie, own.sceneId)
    expect(await a.outcome).toEqual({ synced: true })
    const markers = a.c.doc.getMap(WORK_MAPS.markers)
    markers.set(victim, entry(own.instanceId, 'mine now'))
    markers.delete(victim)
    const closed = await Promise.race([a.closed, new Promise<null>((r) => setTimeout(() => r(null), 1500))])
    // The victim's marker and its comments first (what the attack took), then how it was refused.
    expect((await people.owner.agent.get(`/api/markers/${victim}`)).status).toBe(200)
    expect((await people.owner.agent.get(`/api/markers/${victim}/comments`).expect(200)).body.threads).toHaveLength(1)
    expect(closed?.code).toBe(CLOSE_CODES.refused)
    expect(closed?.reason).toContain(victim)
    // And as one update (set and delete in one transaction): nothing to store, and nothing deleted.
    const b = connect(cookie, own.sceneId)
    expect(await b.outcome).toEqual({ synced: true })
    b.c.doc.transact(() => {
      b.c.doc.getMap(WORK_MAPS.markers).set(victim, entry(own.instanceId, 'mine now'))
      b.c.doc.getMap(WORK_MAPS.markers).delete(victim)
    })
    await new Promise((r) => setTimeout(r, 300))
    expect((await people.owner.agent.get(`/api/markers/${victim}`)).status).toBe(200)
    expect((await people.owner.agent.get(`/api/markers/${victim}/comments`).expect(200)).body.threads).toHaveLength(1)
    expect(observer.markers.has(victim)).toBe(true)
  })

  it('a measurer removed from the project cannot delete a marker on the socket they kept open', async () => {
    const person = await signUpAgent(t, 'Walk removed')
    await addMember(people.owner, places['this scene'].projectId, person, 'measurer')
    const target = await marker('this scene', 'kept')
    const live = connect(await cookieOf(person), work())
    expect(await live.outcome).toEqual({ synced: true })
    await until(() => live.c.markers.has(target))
    await people.owner.agent.delete(`/api/projects/${places['this scene'].projectId}/members/${person.user.id}`).expect(204)
    live.c.markers.delete(target)
    const closed = await Promise.race([live.closed, new Promise<null>((r) => setTimeout(() => r(null), 1000))])
    await new Promise((r) => setTimeout(r, 150))
    expect(await markerRow(target)).toMatchObject({ id: target })
    expect(closed?.code).toBe(CLOSE_CODES.accessEnded)
  })

  it('refuses, before applying, an update that cannot be checked whole: a nested shared type, or one that waits on changes the server lacks', async () => {
    const w = connect(cookies.measurer, work())
    expect(await w.outcome).toEqual({ synced: true })
    const nested = new Y.Map<unknown>()
    const id = uuid()
    w.c.markers.set(id, nested)
    expect(await w.closed).toMatchObject({ code: CLOSE_CODES.refused, reason: expect.stringMatching(/plain data|nested/) })
    expect(observer.markers.has(id)).toBe(false)
    // Two changes made elsewhere; only the second is sent: it cannot apply until the first arrives, so none
    // of it is applied now (never later, unchecked); the client is asked for what the server lacks instead (a
    // client back from a lost connection sends new edits before its sync reply), and the socket stays open.
    const v = connect(cookies.measurer, work())
    expect(await v.outcome).toEqual({ synced: true })
    const elsewhere = new Y.Doc()
    Y.applyUpdate(elsewhere, Y.encodeStateAsUpdate(v.c.doc))
    elsewhere.getMap(WORK_MAPS.markers).set(uuid(), entry(places['this scene'].instanceId, 'first'))
    const between = Y.encodeStateVector(elsewhere)
    const second = uuid()
    elsewhere.getMap(WORK_MAPS.markers).set(second, entry(places['this scene'].instanceId, 'second'))
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, 0)
    syncProtocol.writeUpdate(encoder, Y.encodeStateAsUpdate(elsewhere, between))
    const asked = new Promise<boolean>((resolve) => {
      v.c.provider.ws!.addEventListener('message', (event: MessageEvent) => {
        const d = decoding.createDecoder(new Uint8Array(event.data as ArrayBuffer))
        if (decoding.readVarUint(d) === 0 && decoding.readVarUint(d) === syncProtocol.messageYjsSyncStep1) resolve(true)
      })
    })
    v.c.provider.ws!.send(encoding.toUint8Array(encoder))
    expect(await Promise.race([asked, v.closed.then(() => false)])).toBe(true)
    const room = await t.server.collab.room(work(), 'work')
    expect(room.doc.store.pendingStructs).toBeNull()
    expect(room.doc.getMap(WORK_MAPS.markers).has(second)).toBe(false)
    // Sent whole, both changes are checked and applied.
    const whole = encoding.createEncoder()
    encoding.writeVarUint(whole, 0)
    syncProtocol.writeUpdate(whole, Y.encodeStateAsUpdate(elsewhere, Y.encodeStateVector(v.c.doc)))
    v.c.provider.ws!.send(encoding.toUint8Array(whole))
    await until(() => room.doc.getMap(WORK_MAPS.markers).has(second))
  })

  it('a deleted marker keeps its history, and nobody re-creates its id elsewhere to read it', async () => {
    const victim = await marker('this scene', 'to be deleted')
    await people.owner.agent.delete(`/api/markers/${victim}`).expect(204)
    const history = (await people.owner.agent.get(`/api/markers/${victim}/history`).expect(200)).body.revisions
    expect(history.map((r: { action: string }) => r.action)).toEqual(['created', 'deleted'])
    // The outsider tries to take the id in a scene of their own: refused (an id is never taken again).
    const own = await project(people.outsider, 'Outsider’s second')
    const a = connect(await cookieOf(people.outsider), own.sceneId)
    expect(await a.outcome).toEqual({ synced: true })
    a.c.markers.set(victim, entry(own.instanceId, 'taken over'))
    const closed = await a.closed
    expect(closed).toMatchObject({ code: CLOSE_CODES.refused, reason: expect.stringMatching(/is or was another marker/) })
    expect((await people.outsider.agent.get(`/api/markers/${victim}/history`)).status).toBe(404)
  })

  it('shows a marker’s history only from its own scene, even if a revision of another scene names its id', async () => {
    const m = await marker('this scene', 'own history')
    // A revision under the same id in another project's scene, as the old live door let one be written.
    const other = places['another project’s scene']
    await db()
      .insertInto('marker_revisions')
      .values({ marker_id: m, scene_id: other.sceneId, revision: 1, action: 'created', state: JSON.stringify({ kind: 'distance', label: 'foreign', anchors: [], params: {} }), user_id: null })
      .execute()
    const revisions = (await people.owner.agent.get(`/api/markers/${m}/history`).expect(200)).body.revisions
    expect(revisions.map((r: { state: { label: string } }) => r.state.label)).toEqual(['own history'])
    expect((await people.stranger.agent.get(`/api/markers/${m}/history`)).status).toBe(404)
  })
})
