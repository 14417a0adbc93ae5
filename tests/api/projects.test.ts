import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { joinProject, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer()
})
afterAll(async () => {
  await t?.stop()
})

async function projectWithPeople() {
  const owner = await signUpAgent(t, 'Owner One')
  const created = await owner.agent.post('/api/projects').send({ name: 'Gallery door', description: 'Door and chest' }).expect(201)
  const projectId = created.body.project.id as string
  return { owner, projectId }
}

describe('projects', () => {
  it('creates a project owned by its creator and lists it with the role and member count', async () => {
    const { owner, projectId } = await projectWithPeople()
    const list = await owner.agent.get('/api/projects').expect(200)
    expect(list.body.projects).toEqual([expect.objectContaining({ id: projectId, name: 'Gallery door', role: 'owner', memberCount: 1 })])
    const one = await owner.agent.get(`/api/projects/${projectId}`).expect(200)
    expect(one.body.project.description).toBe('Door and chest')
  })

  it('lists only the projects one is a member of', async () => {
    await projectWithPeople()
    const stranger = await signUpAgent(t)
    const list = await stranger.agent.get('/api/projects').expect(200)
    expect(list.body.projects).toEqual([])
  })

  it('renames and re-describes a project, and refuses an empty name', async () => {
    const { owner, projectId } = await projectWithPeople()
    const res = await owner.agent.patch(`/api/projects/${projectId}`).send({ name: 'West door' }).expect(200)
    expect(res.body.project).toMatchObject({ name: 'West door', description: 'Door and chest' })
    const bad = await owner.agent.patch(`/api/projects/${projectId}`).send({ name: '   ' }).expect(400)
    expect(bad.body.error.field).toBe('name')
    const nothing = await owner.agent.patch(`/api/projects/${projectId}`).send({}).expect(400)
    expect(nothing.body.error.message).toMatch(/give a name, description, anchor tolerance, required margin, daily upload quota or scan point limit to change/)
  })

  it('deletes a project with its memberships', async () => {
    const { owner, projectId } = await projectWithPeople()
    await owner.agent.delete(`/api/projects/${projectId}`).expect(204)
    await owner.agent.get(`/api/projects/${projectId}`).expect(404)
    const left = await t.server.services.db.selectFrom('memberships').selectAll().where('project_id', '=', projectId).execute()
    expect(left).toEqual([])
  })

  it('answers a malformed project id with a 400 that names it', async () => {
    const { owner } = await projectWithPeople()
    const res = await owner.agent.get('/api/projects/not-a-uuid').expect(400)
    expect(res.body.error.field).toBe('projectId')
  })
})

describe('members and roles', () => {
  it('lists an invited member with a role, changes it and removes it', async () => {
    const { owner, projectId } = await projectWithPeople()
    const other = await signUpAgent(t, 'Mia Measurer')
    await joinProject(t, owner.agent, projectId, other, 'measurer')
    const list = await other.agent.get(`/api/projects/${projectId}/members`).expect(200)
    expect(list.body.members.map((m: { role: string }) => m.role)).toEqual(['owner', 'measurer'])
    const changed = await owner.agent.patch(`/api/projects/${projectId}/members/${other.user.id}`).send({ role: 'mentor' }).expect(200)
    expect(changed.body.member.role).toBe('mentor')
    await owner.agent.delete(`/api/projects/${projectId}/members/${other.user.id}`).expect(204)
    await other.agent.get(`/api/projects/${projectId}`).expect(404)
  })

  it('has no way to add an address straight: it would tell an owner whether the address has an account', async () => {
    const { owner, projectId } = await projectWithPeople()
    const other = await signUpAgent(t)
    const known = await owner.agent.post(`/api/projects/${projectId}/members`).send({ email: other.email, role: 'mentor' })
    const unknown = await owner.agent.post(`/api/projects/${projectId}/members`).send({ email: 'nobody@spanmark.example', role: 'mentor' })
    expect(known.status).toBe(404)
    expect(unknown.status).toBe(404)
    expect(known.body).toEqual(unknown.body)
    expect((await owner.agent.get(`/api/projects/${projectId}/members`).expect(200)).body.members).toHaveLength(1)
  })

  it('refuses an unknown role with the allowed ones named', async () => {
    const { owner, projectId } = await projectWithPeople()
    const other = await signUpAgent(t)
    await joinProject(t, owner.agent, projectId, other, 'measurer')
    const res = await owner.agent.patch(`/api/projects/${projectId}/members/${other.user.id}`).send({ role: 'boss' }).expect(400)
    expect(res.body.error.field).toBe('role')
    expect(res.body.error.message).toMatch(/owner, measurer, mentor \(guests get a viewing pass\)/)
    // A guest has no account: that role comes with a viewing pass, never a membership.
    const guest = await owner.agent.patch(`/api/projects/${projectId}/members/${other.user.id}`).send({ role: 'guest' }).expect(400)
    expect(guest.body.error.field).toBe('role')
  })

  it('never leaves a project without an owner', async () => {
    const { owner, projectId } = await projectWithPeople()
    const demote = await owner.agent.patch(`/api/projects/${projectId}/members/${owner.user.id}`).send({ role: 'measurer' }).expect(409)
    expect(demote.body.error.message).toMatch(/at least one owner/)
    await owner.agent.delete(`/api/projects/${projectId}/members/${owner.user.id}`).expect(409)
    const second = await signUpAgent(t)
    await joinProject(t, owner.agent, projectId, second, 'owner')
    // Two owners demoting each other at the same moment: one of them must stay owner.
    const results = await Promise.all([
      owner.agent.patch(`/api/projects/${projectId}/members/${second.user.id}`).send({ role: 'measurer' }),
      second.agent.patch(`/api/projects/${projectId}/members/${owner.user.id}`).send({ role: 'measurer' }),
    ])
    const owners = await t.server.services.db.selectFrom('memberships').select('user_id').where('project_id', '=', projectId).where('role', '=', 'owner').execute()
    expect(owners.length).toBe(1)
    // The loser is refused either by the last-owner rule (409) or, once demoted, by its role (403).
    const statuses = results.map((r) => r.status).sort()
    expect(statuses[0]).toBe(200)
    expect([403, 409]).toContain(statuses[1])
  })
})
