// Viewing passes (DEVELOPERS.md, "Roles and rights"): the e-mailed one-time token (in the fragment) swapped once for an
// HttpOnly, SameSite=Lax guest session cookie scoped to one project; the guest reads that project and
// writes nothing (API 403, live updates dropped); other projects are 404; revoking or expiry stops the pass
// at once, open sockets included (4403); neither token nor cookie reaches a log line or the socket's URL.
import crypto from 'node:crypto'
import { Writable } from 'node:stream'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { WebsocketProvider } from 'y-websocket'
import { CLOSE_CODES } from '@shared/collab/documents'
import { createLogger } from '../../server/logger'
import { countUpdates } from '../../server/repositories/sceneUpdates'
import { apiRoutes } from '../../server/routes'
import { liveClient, synced } from '../utils/live'
import { guestAgent, signUpAgent, startTestServer, tokenOf, type TestServer } from '../utils/server'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
let sceneId: string
let instanceId: string
let markerId: string
let scanId: string
const SCAN_FILE = Buffer.from('0 0 0\n1 0 0\n0 1 0\n')
const open: WebsocketProvider[] = []

/** Every line the server logs, at every level, through the same redaction as production. */
const logged: string[] = []
const capture = new Writable({
  write(chunk, _enc, done) {
    logged.push(String(chunk))
    done()
  },
})

beforeAll(async () => {
  t = await startTestServer({}, {}, createLogger('trace', false, capture))
  owner = await signUpAgent(t, 'Pia Owner')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Lighthouse lantern room' }).expect(201)).body.project.id
  sceneId = (await owner.agent.post(`/api/projects/${projectId}/scenes`).send({ name: 'Lantern room' }).expect(201)).body.scene.id
  const scan = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', SCAN_FILE, 'three.xyz').expect(202)
  scanId = scan.body.scan.id
  // Ready with one stored tile, so the hierarchy and tile routes answer as for a processed scan.
  const bounds = { min_x: 0, min_y: 0, min_z: 0, max_x: 1, max_y: 1, max_z: 0 }
  const claim = '00000000-0000-4000-8000-0000000c1a1e'
  await t.server.services.db.updateTable('scans').set({ status: 'ready', ready_at: new Date(), point_count: 3, spacing: 1, claim_id: claim, ...bounds }).where('id', '=', scanId).execute()
  await t.server.services.db.insertInto('scan_tiles').values({ scan_id: scanId, claim_id: claim, node_key: 'r', level: 0, point_count: 3, byte_size: 4, data: Buffer.from([1, 2, 3, 4]), ...bounds }).execute()
  instanceId = (await owner.agent.post(`/api/scenes/${sceneId}/instances`).send({ scanId: scan.body.scan.id }).expect(201)).body.instance.id
  markerId = (
    await owner.agent
      .post(`/api/scenes/${sceneId}/markers`)
      .send({ kind: 'distance', label: 'sill to sill', anchors: [{ instanceId, x: 0, y: 0, z: 0 }, { instanceId, x: 1, y: 0, z: 0 }] })
      .expect(201)
  ).body.marker.id
})
afterAll(async () => {
  for (const p of open) p.destroy()
  await t?.stop()
})

function live(cookie: string, path = sceneId) {
  const c = liveClient(t.url, cookie, path)
  open.push(c.provider)
  return c
}
const closeCode = (p: WebsocketProvider) =>
  new Promise<number>((resolve) =>
    p.on('connection-close', (event: CloseEvent | null) => {
      p.shouldConnect = false
      resolve(event?.code ?? -1)
    }),
  )
const ownerCookie = async () => {
  const res = await t.agent().post('/api/auth/sign-in').send({ email: owner.email, password: owner.password }).expect(200)
  return String(res.headers['set-cookie']![0]).split(';')[0]!
}

describe('viewing passes', () => {
  it('e-mails a one-time link and swaps its token once for an HttpOnly, SameSite=Lax guest cookie', async () => {
    const email = `gull-${process.pid}@spanmark.example`
    const since = new Date()
    const created = await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email, name: 'Gus Gull', days: 3 }).expect(201)
    expect(created.body.pass).toMatchObject({ email, name: 'Gus Gull', state: 'not-opened', createdBy: 'Pia Owner', openedAt: null })
    expect(new Date(created.body.pass.expiresAt).getTime() - Date.now()).toBeGreaterThan(2.9 * 24 * 3600_000)
    const mail = await t.waitForMail(email, since)
    expect(mail.subject).toBe('A viewing pass for "Lighthouse lantern room" on Spanmark')
    const link = mail.links.find((l) => l.includes('/passes/open#token='))!
    expect(new URL(link).search).toBe('')
    const token = tokenOf(link)

    const browser = t.agent()
    const opened = await browser.post('/api/passes/open').send({ token }).expect(200)
    expect(opened.body.guest).toMatchObject({ passId: created.body.pass.id, projectId, projectName: 'Lighthouse lantern room', name: 'Gus Gull' })
    const cookies = (opened.headers['set-cookie'] as unknown as string[]).join('\n')
    expect(cookies).toMatch(/^spanmark_pass=[A-Za-z0-9_-]{40,}; /m)
    expect(cookies).toMatch(/HttpOnly/)
    expect(cookies).toMatch(/SameSite=Lax/)
    expect(cookies).toMatch(/Path=\//)
    expect(cookies).not.toMatch(/spanmark_session=/)
    const value = /spanmark_pass=([^;]+)/.exec(cookies)![1]!
    expect(value).not.toBe(token)

    // Only hashes are kept: the token's and the session cookie's.
    const row = await t.server.services.db.selectFrom('guest_links').selectAll().where('id', '=', created.body.pass.id).executeTakeFirstOrThrow()
    const sha = (s: string) => crypto.createHash('sha256').update(s).digest('hex')
    expect(row.token_hash).toBe(sha(token))
    expect(row.session_hash).toBe(sha(value))
    expect(row.opened_at).not.toBeNull()

    // The same browser opening its link again (a reload) keeps its pass; anyone else is refused.
    await browser.post('/api/passes/open').send({ token }).expect(200)
    const second = await t.agent().post('/api/passes/open').send({ token }).expect(400)
    expect(second.body.error).toMatchObject({ code: 'invalid-token', field: 'token' })
    expect(second.body.error.message).toMatch(/opened already/)
    expect(row.session_hash).toBe((await t.server.services.db.selectFrom('guest_links').select('session_hash').where('id', '=', row.id).executeTakeFirstOrThrow()).session_hash)

    const session = await browser.get('/api/session').expect(200)
    expect(session.body).toEqual({ user: null, guest: opened.body.guest })
    expect((await t.agent().get('/api/session').expect(200)).body).toEqual({ user: null, guest: null })
    const listed = (await owner.agent.get(`/api/projects/${projectId}/passes`).expect(200)).body.passes
    expect(listed.find((p: { id: string }) => p.id === row.id)).toMatchObject({ state: 'open', lastUsedAt: expect.any(String) })
  })

  it('lets the guest read its project (role guest) and refuses every write with 403, and other projects with 404', async () => {
    const { agent } = await guestAgent(t, owner.agent, projectId)
    const project = (await agent.get(`/api/projects/${projectId}`).expect(200)).body.project
    expect(project).toMatchObject({ id: projectId, role: 'guest', name: 'Lighthouse lantern room' })
    expect((await agent.get(`/api/projects/${projectId}/scenes`).expect(200)).body.scenes).toHaveLength(1)
    expect((await agent.get(`/api/scenes/${sceneId}`).expect(200)).body.scene.instances).toHaveLength(1)
    expect((await agent.get(`/api/scenes/${sceneId}/markers`).expect(200)).body.markers.map((m: { label: string }) => m.label)).toEqual(['sill to sill'])
    await agent.get(`/api/markers/${markerId}/history`).expect(200)
    await agent.get(`/api/projects/${projectId}/scans`).expect(200)
    // Who the team is, not how to reach them: the members' names and roles without their e-mail addresses.
    const seen = (await agent.get(`/api/projects/${projectId}/members`).expect(200)).body.members as { name: string; email: string | null }[]
    expect(seen.length).toBeGreaterThan(0)
    for (const m of seen) expect(m.email, m.name).toBeNull()
    const asOwner = (await owner.agent.get(`/api/projects/${projectId}/members`).expect(200)).body.members as { email: string | null }[]
    expect(asOwner.map((m) => m.email)).toContain(owner.email)

    // A real thing behind every path parameter, so each write reaches the rights check.
    const ids: Record<string, string> = {
      projectId,
      sceneId,
      instanceId,
      markerId,
      scanId: (await agent.get(`/api/projects/${projectId}/scans`)).body.scans[0].id,
      tokenId: (await owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'rig' }).expect(201)).body.token.id,
      inviteId: (await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: `i-${process.pid}@spanmark.example`, role: 'mentor' }).expect(201)).body.invite.id,
      passId: (await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email: `p-${process.pid}@spanmark.example`, name: 'Other Guest' }).expect(201)).body.pass.id,
      checkpointId: (await t.server.services.db.insertInto('scene_checkpoints').values({ scene_id: sceneId, name: 'issued', markers: '[]', marker_count: 0 }).returning('id').executeTakeFirstOrThrow()).id,
      commentId: (await owner.agent.post(`/api/markers/${markerId}/comments`).send({ body: 'For the walk.' }).expect(201)).body.comment.id,
      registrationId: (
        await t.server.services.db
          .insertInto('registrations')
          .values({ scene_id: sceneId, moving_instance_id: instanceId, held_instance_id: null, moving_name: 'moving', held_name: 'none', matrix_before: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1] })
          .returning('id')
          .executeTakeFirstOrThrow()
      ).id,
      uploadId: (await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'walk.xyz', sizeBytes: 100 }).expect(201)).body.upload.id,
      objectId: (await owner.agent.post(`/api/scenes/${sceneId}/objects`).send({ name: 'walk object', members: [instanceId] }).expect(201)).body.object.id,
      trimId: (await owner.agent.post(`/api/instances/${instanceId}/trims`).send({ mode: 'cut', shape: { shape: 'below', point: [0, 0, -5] } }).expect(201)).body.trim.id,
      partNumber: '1',
      userId: owner.user.id,
      nodeKey: 'r',
    }
    const writes = apiRoutes.filter((r) => r.access.kind === 'project' && r.method !== 'get')
    expect(writes.length).toBeGreaterThan(10)
    for (const r of writes) {
      const path = r.path.replace(/:(\w+)/g, (_m, name: string) => ids[name] ?? `(no value for :${name})`)
      const res = await agent[r.method](`/api${path}`).send({})
      expect(res.status, `${r.method.toUpperCase()} ${r.path}`).toBe(403)
      expect(res.body.error.code).toBe('forbidden')
    }
    // Account routes: a pass is no account.
    await agent.post('/api/projects').send({ name: 'Mine' }).expect(403)
    await agent.patch('/api/me').send({ name: 'Renamed' }).expect(403)
    await agent.get('/api/projects').expect(403)

    const other = (await owner.agent.post('/api/projects').send({ name: 'Somewhere else' }).expect(201)).body.project.id
    const res = await agent.get(`/api/projects/${other}`).expect(404)
    expect(res.body.error.message).not.toMatch(/role|pass/)
    await agent.get(`/api/projects/${other}/scenes`).expect(404)
  })

  it('names a guest’s presence from the pass, and closes its socket (read-only) when it sends a change, storing none', async () => {
    const { cookie } = await guestAgent(t, owner.agent, projectId)
    const guest = live(cookie)
    await synced(guest.provider)
    expect(guest.markers.has(markerId)).toBe(true)
    const room = await t.server.collab.room(sceneId, 'work')
    guest.provider.awareness.setLocalState({ user: { name: 'Someone Important' }, cursor: [1, 1, 1] })
    const names = () => [...room.awareness.getStates().values()].map((s) => (s as { user?: { name: string } }).user?.name)
    const deadline = Date.now() + 2000
    while (!names().includes('Gale Guest') && Date.now() < deadline) await new Promise((r) => setTimeout(r, 20))
    expect(names()).toContain('Gale Guest')
    expect(names()).not.toContain('Someone Important')
    const before = Number((await countUpdates(t.server.services.db, sceneId, 'work')).n)
    const closed = closeCode(guest.provider)
    guest.markers.set('5e0e0000-0000-4000-8000-0000000000e1', { kind: 'distance', label: 'guest wrote this' })
    guest.markers.delete(markerId)
    expect(await closed).toBe(CLOSE_CODES.readOnly)
    expect(Number((await countUpdates(t.server.services.db, sceneId, 'work')).n)).toBe(before)
    const fresh = live(await ownerCookie())
    await synced(fresh.provider)
    expect(fresh.markers.has('5e0e0000-0000-4000-8000-0000000000e1')).toBe(false)
    expect(fresh.markers.has(markerId)).toBe(true)
    await owner.agent.get(`/api/markers/${markerId}`).expect(200)
  })

  it('stops a revoked pass at once: the next request is refused and its open socket closes with 4403', async () => {
    const { agent, cookie, pass } = await guestAgent(t, owner.agent, projectId)
    const work = live(cookie), record = live(cookie, `${sceneId}/record`)
    await Promise.all([synced(work.provider), synced(record.provider)])
    const closed = Promise.all([closeCode(work.provider), closeCode(record.provider)])
    await owner.agent.delete(`/api/passes/${pass.id}`).expect(204)
    expect(await closed).toEqual([CLOSE_CODES.forbidden, CLOSE_CODES.forbidden])
    const res = await agent.get(`/api/projects/${projectId}`).expect(401)
    expect(String(res.headers['set-cookie'])).toMatch(/spanmark_pass=;.*Max-Age=0/)
    expect((await agent.get('/api/session').expect(200)).body.guest).toBeNull()
    // A new socket with the old cookie is refused too.
    expect(await closeCode(live(cookie).provider)).toBe(CLOSE_CODES.unauthenticated)
    const listed = (await owner.agent.get(`/api/projects/${projectId}/passes`).expect(200)).body.passes
    expect(listed.find((p: { id: string }) => p.id === pass.id)).toMatchObject({ state: 'revoked', revokedAt: expect.any(String) })
    // An unopened pass that was revoked cannot be opened.
    const email = `late-${process.pid}@spanmark.example`
    const since = new Date()
    const unopened = (await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email, name: 'Never Opened' }).expect(201)).body.pass
    const token = tokenOf((await t.waitForMail(email, since)).links[0]!)
    await owner.agent.delete(`/api/passes/${unopened.id}`).expect(204)
    expect((await t.agent().post('/api/passes/open').send({ token }).expect(400)).body.error.message).toMatch(/withdrawn/)
  })

  it('ends at its expiry: requests, new opens and an open socket', async () => {
    const { agent, cookie, pass } = await guestAgent(t, owner.agent, projectId)
    await t.server.services.db.updateTable('guest_links').set({ expires_at: new Date(Date.now() + 1500) }).where('id', '=', pass.id).execute()
    const work = live(cookie)
    await synced(work.provider)
    const started = Date.now()
    expect(await closeCode(work.provider)).toBe(CLOSE_CODES.forbidden)
    expect(Date.now() - started).toBeLessThan(4000)
    await agent.get(`/api/projects/${projectId}`).expect(401)
    const listed = (await owner.agent.get(`/api/projects/${projectId}/passes`).expect(200)).body.passes
    expect(listed.find((p: { id: string }) => p.id === pass.id)).toMatchObject({ state: 'expired' })

    const email = `expired-${process.pid}@spanmark.example`
    const since = new Date()
    const unopened = (await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email, name: 'Too Late' }).expect(201)).body.pass
    const token = tokenOf((await t.waitForMail(email, since)).links[0]!)
    await t.server.services.db.updateTable('guest_links').set({ expires_at: new Date(Date.now() - 1000) }).where('id', '=', unopened.id).execute()
    expect((await t.agent().post('/api/passes/open').send({ token }).expect(400)).body.error.message).toMatch(/expired/)
  })

  it('signing out ends the guest session and clears its cookie', async () => {
    const { agent, cookie } = await guestAgent(t, owner.agent, projectId)
    const work = live(cookie)
    await synced(work.provider)
    const closed = closeCode(work.provider)
    const res = await agent.post('/api/auth/sign-out').expect(204)
    expect(String(res.headers['set-cookie'])).toMatch(/spanmark_pass=;/)
    expect(await closed).toBe(CLOSE_CODES.forbidden)
    await t.agent().get(`/api/projects/${projectId}`).set('Cookie', cookie).expect(401)
  })

  it('lets a member of another project hold a pass to this one, as its guest', async () => {
    const member = await signUpAgent(t, 'Mara Elsewhere')
    const { cookie } = await guestAgent(t, owner.agent, projectId)
    const both = t.agent().set('Cookie', `${cookie}; ${String((await t.agent().post('/api/auth/sign-in').send({ email: member.email, password: member.password })).headers['set-cookie']![0]).split(';')[0]}`)
    const session = (await both.get('/api/session').expect(200)).body
    expect(session.user.email).toBe(member.email)
    expect(session.guest.projectId).toBe(projectId)
    expect((await both.get(`/api/projects/${projectId}`).expect(200)).body.project.role).toBe('guest')
    await both.post(`/api/scenes/${sceneId}/markers`).send({ kind: 'distance', anchors: [] }).expect(403)
  })

  it('validates a new pass and refuses a guest cookie request from another origin', async () => {
    const bad = await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email: 'x@spanmark.example', name: 'X', days: 365 }).expect(400)
    expect(bad.body.error.message).toMatch(/^body\.days: must be at most 90 days/)
    await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email: 'nope', name: 'X' }).expect(400)
    const { agent } = await guestAgent(t, owner.agent, projectId)
    const foreign = await agent.post('/api/auth/sign-out').set('Origin', 'http://elsewhere.example').expect(403)
    expect(foreign.body.error.code).toBe('bad-origin')
  })

  it('never writes a token or a guest cookie into a log line', async () => {
    const email = `logged-${process.pid}@spanmark.example`
    const since = new Date()
    await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email, name: 'Lou Logged' }).expect(201)
    const token = tokenOf((await t.waitForMail(email, since)).links[0]!)
    const browser = t.agent()
    const opened = await browser.post('/api/passes/open').send({ token }).expect(200)
    const value = /spanmark_pass=([^;]+)/.exec(String(opened.headers['set-cookie']))![1]!
    await browser.get(`/api/projects/${projectId}`).expect(200)
    const work = live(`spanmark_pass=${value}`)
    await synced(work.provider)
    // Something that would carry them if anything did: a refused second open, and a log call with the body.
    await t.agent().post('/api/passes/open').send({ token }).expect(400)
    t.server.services.log.info({ body: { token } }, 'a body, logged')
    await new Promise((r) => setTimeout(r, 100))
    const all = logged.join('')
    expect(all).toContain('/api/passes/open')
    expect(all).toContain('[redacted]')
    expect(all).not.toContain(token)
    expect(all).not.toContain(value)
    // The socket's URL is the scene's path: the pass travels only in the cookie.
    expect(work.provider.url).toBe(`${t.url.replace(/^http/, 'ws')}/collab/${sceneId}`)
  })
})

describe('guests see, they do not take (issue 12, point 8)', () => {
  it('refuses a guest the original scan file unless the owner allowed downloads on that very pass', async () => {
    // Off by default: a pass issued without the option.
    const { agent, pass } = await guestAgent(t, owner.agent, projectId)
    expect(pass).toMatchObject({ allowDownload: false })
    await agent.get(`/api/scans/${scanId}`).expect(200)
    const refused = await agent.get(`/api/scans/${scanId}/original`).expect(403)
    expect(refused.body.error.code).toBe('forbidden')
    expect(refused.body.error.message).toMatch(/does not let you download their original files/)
    expect((await agent.get('/api/session').expect(200)).body.guest).toMatchObject({ allowDownload: false })

    // Allowed on the pass: the guest gets the very bytes uploaded; the owner's list says so.
    const allowed = await guestAgent(t, owner.agent, projectId, undefined, { allowDownload: true })
    expect(allowed.pass).toMatchObject({ allowDownload: true })
    const file = await allowed.agent.get(`/api/scans/${scanId}/original`).buffer(true).expect(200)
    expect(Buffer.compare(file.body as Buffer, SCAN_FILE)).toBe(0)
    expect((await allowed.agent.get('/api/session').expect(200)).body.guest).toMatchObject({ allowDownload: true })
    const listed = (await owner.agent.get(`/api/projects/${projectId}/passes`).expect(200)).body.passes as { id: string; allowDownload: boolean }[]
    expect(listed.find((p) => p.id === pass.id)!.allowDownload).toBe(false)
    expect(listed.find((p) => p.id === allowed.pass.id)!.allowDownload).toBe(true)

    // Members keep downloading; a bad option is a 400 naming it.
    await owner.agent.get(`/api/scans/${scanId}/original`).expect(200)
    const bad = await owner.agent.post(`/api/projects/${projectId}/passes`).send({ email: 'opt@spanmark.example', name: 'Opt', allowDownload: 'yes' }).expect(400)
    expect(bad.body.error.message).toMatch(/^body\.allowDownload: must be true or false/)
  })

  it("keeps a guest's tiles and hierarchy out of caches beyond the pass's life; members cache as before", async () => {
    const { agent, pass } = await guestAgent(t, owner.agent, projectId, undefined, { days: 1 })
    const maxAge = (header: string | undefined) => Number(/(?:^|,\s*)max-age=(\d+)/.exec(header ?? '')?.[1])

    // RFC 9111 section 5.2.2: `private` keeps shared caches out; max-age bounds the browser's copy.
    const tile = await agent.get(`/api/scans/${scanId}/tiles/r`).expect(200)
    expect(tile.headers['cache-control']).toMatch(/^private, /)
    expect(maxAge(tile.headers['cache-control'])).toBeLessThanOrEqual(24 * 3600)
    const hierarchy = await agent.get(`/api/scans/${scanId}/hierarchy`).expect(200)
    expect(hierarchy.body.nodes).toHaveLength(1)
    expect(hierarchy.headers['cache-control']).toBe('private, no-store')

    // A pass with ten minutes left: the tile may be kept ten minutes at most, a revalidation (304) included.
    await t.server.services.db.updateTable('guest_links').set({ expires_at: new Date(Date.now() + 600_000) }).where('id', '=', pass.id).execute()
    const short = await agent.get(`/api/scans/${scanId}/tiles/r`).expect(200)
    expect(maxAge(short.headers['cache-control'])).toBeGreaterThan(590)
    expect(maxAge(short.headers['cache-control'])).toBeLessThanOrEqual(600)
    const again = await agent.get(`/api/scans/${scanId}/tiles/r`).set('If-None-Match', String(short.headers.etag)).expect(304)
    expect(maxAge(again.headers['cache-control'])).toBeLessThanOrEqual(600)

    // Members: a day, as before; the hierarchy carries no Cache-Control of its own.
    const member = await owner.agent.get(`/api/scans/${scanId}/tiles/r`).expect(200)
    expect(member.headers['cache-control']).toBe('private, max-age=86400')
    expect((await owner.agent.get(`/api/scans/${scanId}/hierarchy`).expect(200)).headers['cache-control']).toBeUndefined()
  })
})
