// Generated from the route registry (server/routes/index.ts): every API route, every role of shared/auth/roles.ts
// section 2 (the guest a real one: no account, a viewing pass opened through its e-mailed link), a
// signed-in non-member, a guest of another project and an anonymous caller. A route added to the registry
// is walked here without anyone writing a test for it; a route whose access or path parameters are
// unknown to this walker fails the test rather than slipping through.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { can, MEMBER_ROLES, ROLES, type MemberRole } from '@shared/auth/roles'
import { apiRoutes } from '../../server/routes'
import type { RouteDef } from '../../server/routes/registry'
import { guestAgent, signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { insertMembership } from '../../server/repositories/memberships'

let t: TestServer
type Agent = Awaited<ReturnType<typeof signUpAgent>>
const people = {} as Record<MemberRole | 'outsider', Agent>
/** A guest holding a pass to a project of its own, to walk every route from outside. */
let strangerGuest: ReturnType<TestServer['agent']>

beforeAll(async () => {
  t = await startTestServer()
  for (const who of [...MEMBER_ROLES, 'outsider'] as const) people[who] = await signUpAgent(t, `The ${who}`)
  const elsewhere = await people.outsider.agent.post('/api/projects').send({ name: 'Elsewhere' }).expect(201)
  strangerGuest = (await guestAgent(t, people.outsider.agent, elsewhere.body.project.id)).agent
})
afterAll(async () => {
  await t?.stop()
})

interface Fixture {
  projectId: string
  scanId: string
  tokenId: string
  /** The rig key's secret. */
  secret: string
  sceneId: string
  instanceId: string
  markerId: string
  checkpointId: string
  inviteId: string
  passId: string
  /** With `withGuest`: an agent holding an opened viewing pass of this project. */
  guest: ReturnType<TestServer['agent']> | null
  /** A comment thread's first comment on the marker. */
  commentId: string
  registrationId: string
  exportId: string
  uploadId: string
  objectId: string
  trimId: string
}

let invited = 0

/**
 * A project with one member per member role, a scan (uploaded, left queued: no worker runs here), a rig
 * key, a pending invitation and a viewing pass (opened by a guest's agent when `withGuest`); made afresh
 * for each call, since some routes delete things.
 */
async function freshProject(withGuest = false): Promise<Fixture> {
  const res = await people.owner.agent.post('/api/projects').send({ name: 'Matrix' }).expect(201)
  const projectId = res.body.project.id as string
  // Members are written straight to the table: how people join is tested in invites.test.ts, and a fresh
  // project is made for every role of every route here (an e-mailed invitation each would double the walk).
  for (const role of MEMBER_ROLES.filter((r) => r !== 'owner')) {
    await insertMembership(t.server.services.db, projectId, people[role].user.id, role)
  }
  const scan = await people.owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n1 0 0\n0 1 0\n'), 'three.xyz').expect(202)
  const token = await people.owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'matrix rig' }).expect(201)
  // A second scan, marked ready by hand (no worker runs here), to be placed in a scene.
  const placed = await people.owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n'), 'placed.xyz').expect(202)
  await t.server.services.db.updateTable('scans').set({ status: 'ready' }).where('id', '=', placed.body.scan.id).execute()
  const scene = await people.owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Matrix scene' }).expect(201)
  const instance = await people.owner.agent.post(`/api/scenes/${scene.body.scene.id}/instances`).send({ scanId: placed.body.scan.id }).expect(201)
  const instanceId = instance.body.instance.id as string
  const marker = await people.owner.agent
    .post(`/api/scenes/${scene.body.scene.id}/markers`)
    .send({ kind: 'distance', anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1, y: 0, z: 0 }] })
    .expect(201)
  const invite = await people.owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: `invitee${++invited}@spanmark.example`, role: 'mentor' }).expect(201)
  // The marker's check stays pending (no worker here), so the checkpoint is written straight to the table.
  const comment = await people.owner.agent.post(`/api/markers/${marker.body.marker.id}/comments`).send({ body: 'A thread to resolve.' }).expect(201)
  const checkpoint = await t.server.services.db.insertInto('scene_checkpoints').values({ scene_id: scene.body.scene.id, name: 'issued', markers: '[]', marker_count: 0 }).returning('id').executeTakeFirstOrThrow()
  // A draft registration of the placement (no fit: no scan is processed here), written straight to the table.
  const registration = await t.server.services.db
    .insertInto('registrations')
    .values({ scene_id: scene.body.scene.id, moving_instance_id: instanceId, held_instance_id: null, moving_name: 'placed.xyz', held_name: 'none', matrix_before: instance.body.instance.matrix })
    .returning('id')
    .executeTakeFirstOrThrow()
  // An export of the scene, written straight to the table (no worker runs here: it stays queued).
  const exported = await t.server.services.db
    .insertInto('exports')
    .values({ project_id: projectId, scene_id: scene.body.scene.id, source: 'scene', format: 'las', file_name: 'matrix.las' })
    .returning('id')
    .executeTakeFirstOrThrow()
  // A resumable upload under way, written straight to the table (no multipart upload in storage is needed).
  const upload = await t.server.services.db
    .insertInto('uploads')
    .values({ project_id: projectId, scan_id: crypto.randomUUID(), object_key: `projects/${projectId}/scans/x/matrix.xyz`, s3_upload_id: 'none', file_name: 'matrix.xyz', declared_size: 100, part_size: 65536, part_count: 1 })
    .returning('id')
    .executeTakeFirstOrThrow()
  // An object of the placement with one trim, written straight to the tables (how they are made is tested in objects.test.ts).
  const object = await t.server.services.db.insertInto('scene_objects').values({ scene_id: scene.body.scene.id, name: 'matrix object', stray: 'null' }).returning('id').executeTakeFirstOrThrow()
  await t.server.services.db.insertInto('object_members').values({ object_id: object.id, instance_id: instanceId, position: 0 }).execute()
  const trim = await t.server.services.db
    .insertInto('trims')
    .values({ scene_id: scene.body.scene.id, instance_id: instanceId, object_id: object.id, mode: 'cut', shape: JSON.stringify({ shape: 'below', point: [0, 0, -1], up: [0, 0, 1] }) })
    .returning('id')
    .executeTakeFirstOrThrow()
  let passId: string
  let guest: Fixture['guest'] = null
  if (withGuest) {
    const opened = await guestAgent(t, people.owner.agent, projectId)
    ;({ agent: guest } = opened)
    passId = opened.pass.id
  } else {
    passId = (await people.owner.agent.post(`/api/projects/${projectId}/passes`).send({ email: 'unopened@spanmark.example', name: 'Not Opened' }).expect(201)).body.pass.id
  }
  return {
    projectId,
    scanId: scan.body.scan.id,
    tokenId: token.body.token.id,
    secret: token.body.secret,
    sceneId: scene.body.scene.id,
    instanceId,
    markerId: marker.body.marker.id,
    checkpointId: checkpoint.id,
    commentId: comment.body.comment.id,
    registrationId: registration.id,
    exportId: exported.id,
    uploadId: upload.id,
    objectId: object.id,
    trimId: trim.id,
    inviteId: invite.body.invite.id,
    passId,
    guest,
  }
}

const NOWHERE: Fixture = {
  projectId: '00000000-0000-4000-8000-000000000000',
  scanId: '00000000-0000-4000-8000-000000000001',
  tokenId: '00000000-0000-4000-8000-000000000002',
  secret: 'smk_none',
  sceneId: '00000000-0000-4000-8000-000000000003',
  instanceId: '00000000-0000-4000-8000-000000000004',
  markerId: '00000000-0000-4000-8000-000000000005',
  inviteId: '00000000-0000-4000-8000-000000000006',
  passId: '00000000-0000-4000-8000-000000000007',
  checkpointId: '00000000-0000-4000-8000-000000000008',
  commentId: '00000000-0000-4000-8000-000000000009',
  registrationId: '00000000-0000-4000-8000-00000000000a',
  exportId: '00000000-0000-4000-8000-00000000000b',
  uploadId: '00000000-0000-4000-8000-00000000000c',
  objectId: '00000000-0000-4000-8000-00000000000d',
  trimId: '00000000-0000-4000-8000-00000000000e',
  guest: null,
}

/** Values for path parameters; a parameter missing here fails the walk (add it when adding a route). */
function fillPath(route: RouteDef, f: Fixture): string {
  return route.path.replace(/:(\w+)/g, (_m, name: string) => {
    switch (name) {
      case 'projectId':
        return f.projectId
      case 'scanId':
        return f.scanId
      case 'tokenId':
        return f.tokenId
      case 'sceneId':
        return f.sceneId
      case 'instanceId':
        return f.instanceId
      case 'markerId':
        return f.markerId
      case 'checkpointId':
        return f.checkpointId
      case 'inviteId':
        return f.inviteId
      case 'passId':
        return f.passId
      case 'commentId':
        return f.commentId
      case 'registrationId':
        return f.registrationId
      case 'exportId':
        return f.exportId
      case 'uploadId':
        return f.uploadId
      case 'objectId':
        return f.objectId
      case 'trimId':
        return f.trimId
      case 'partNumber':
        return '1'
      case 'nodeKey':
        return 'r'
      case 'userId':
        return people.mentor.user.id
      default:
        throw new Error(`the authorization walk does not know path parameter :${name} of ${route.method.toUpperCase()} ${route.path}`)
    }
  })
}

function call(agent: ReturnType<TestServer['agent']>, route: RouteDef, path: string) {
  const req = agent[route.method](`/api${path}`)
  return route.method === 'get' || route.method === 'delete' ? req : req.send({})
}

const routeName = (r: RouteDef) => `${r.method.toUpperCase()} /api${r.path}`

describe('authorization matrix', () => {
  it('covers every route in the registry', () => {
    expect(apiRoutes.length).toBeGreaterThan(10)
    for (const r of apiRoutes) expect(['public', 'user', 'project', 'dev']).toContain(r.access.kind)
  })

  for (const route of apiRoutes.filter((r) => r.access.kind === 'project')) {
    const right = (route.access as { right: Parameters<typeof can>[1] }).right
    it(`${routeName(route)} (needs ${right})`, async () => {
      const path = fillPath(route, await freshProject())
      const anon = await call(t.agent(), route, path)
      expect(anon.status, 'anonymous').toBe(401)
      const outsider = await call(people.outsider.agent, route, path)
      expect(outsider.status, 'non-member').toBe(404)
      expect(outsider.body.error.message).not.toMatch(/role/)
      const foreignGuest = await call(strangerGuest, route, path)
      expect(foreignGuest.status, 'guest of another project').toBe(404)
      expect(foreignGuest.body).toEqual(outsider.body)
      // A project of its own for each role (an allowed call may delete the project or a member), so the roles'
      // calls are independent and run side by side.
      const answers = await Promise.all(
        ROLES.map(async (role) => {
          const f = await freshProject(role === 'guest')
          return { role, res: await call(role === 'guest' ? f.guest! : people[role].agent, route, fillPath(route, f)) }
        }),
      )
      for (const { role, res } of answers) {
        if (can(role, right)) expect([401, 403, 404], `${role} is allowed`).not.toContain(res.status)
        else {
          expect(res.status, `${role} lacks ${right}`).toBe(403)
          expect(res.body.error.code).toBe('forbidden')
        }
      }
    })
  }

  // A rig key (upload token) opens only the routes that accept one, and only in its own project.
  for (const route of apiRoutes.filter((r) => r.access.kind === 'project')) {
    const access = route.access as { right: Parameters<typeof can>[1]; rigKey?: boolean }
    it(`${routeName(route)} with a rig key (${access.rigKey ? 'accepted' : 'refused'})`, async () => {
      const [own, other] = await Promise.all([freshProject(), freshProject()])
      const withKey = (secret: string, f: Fixture) => call(t.agent().set('Authorization', `Bearer ${secret}`), route, fillPath(route, f))
      const res = await withKey(own.secret, own)
      if (!access.rigKey) expect(res.status).toBe(401)
      else if (can('measurer', access.right)) expect([401, 403, 404]).not.toContain(res.status)
      else expect(res.status).toBe(403)
      if (access.rigKey) expect((await withKey(own.secret, other)).status, 'key of another project').toBe(404)
      expect((await withKey('smk_not-a-key', own)).status, 'unknown key').toBe(401)
      await people.owner.agent.delete(`/api/upload-tokens/${own.tokenId}`).expect(204)
      expect((await withKey(own.secret, own)).status, 'revoked key').toBe(401)
    })
  }

  // Routes for an account: none without a session (401), and a viewing pass is no account (403).
  for (const route of apiRoutes.filter((r) => r.access.kind === 'user')) {
    it(`${routeName(route)} (signed in)`, async () => {
      const anon = await call(t.agent(), route, fillPath(route, NOWHERE))
      expect(anon.status).toBe(401)
      expect(anon.body.error.code).toBe('unauthenticated')
      const guest = await call(strangerGuest, route, fillPath(route, NOWHERE))
      expect(guest.status, 'guest with a pass').toBe(403)
      expect(guest.body.error.code).toBe('forbidden')
    })
  }

  for (const route of apiRoutes.filter((r) => r.access.kind === 'public' || r.access.kind === 'dev')) {
    it(`${routeName(route)} (open)`, async () => {
      const anon = await call(t.agent(), route, fillPath(route, NOWHERE))
      expect([401, 403]).not.toContain(anon.status)
    })
  }

  it('has every write refused to a guest: no route that changes data is open to the guest role', () => {
    for (const r of apiRoutes.filter((x) => x.access.kind === 'project' && x.method !== 'get')) {
      expect(can('guest', (r.access as { right: Parameters<typeof can>[1] }).right), routeName(r)).toBe(false)
    }
  })

  it('answers 404 to an unknown project id as to a project one is not in', async () => {
    const res = await people.outsider.agent.get('/api/projects/00000000-0000-4000-8000-000000000000').expect(404)
    const { projectId } = await freshProject()
    const real = await people.outsider.agent.get(`/api/projects/${projectId}`).expect(404)
    expect(real.body).toEqual(res.body)
  })
})
