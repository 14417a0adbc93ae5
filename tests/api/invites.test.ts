// Invitations by e-mail: through the outbox and the real (fake) SMTP server into dev_mail, the link's token
// in the fragment, sent back in request bodies only; joining as a new person and as an existing account,
// the wrong account, a resend killing the old link, a withdrawn and an expired invitation, the 409s and the
// rate limit.
import crypto from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { joinProject, signUpAgent, signUpAs, startTestServer, tokenOf, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer()
})
afterAll(async () => {
  await t?.stop()
})

let n = 0
const address = (what: string) => `${what}${++n}-${process.pid}@spanmark.example`

async function ownerWithProject(name = 'Boathouse hatch') {
  const owner = await signUpAgent(t, 'Odile Owner')
  const projectId = (await owner.agent.post('/api/projects').send({ name }).expect(201)).body.project.id as string
  return { owner, projectId }
}

/** Invites `email` and returns the invitation and the token of the e-mail it sent. */
async function invite(owner: ReturnType<TestServer['agent']>, projectId: string, email: string, role: 'measurer' | 'mentor' = 'measurer') {
  const since = new Date()
  const res = await owner.post(`/api/projects/${projectId}/invites`).send({ email, role }).expect(201)
  const mail = await t.waitForMail(email.trim().toLowerCase(), since)
  const link = mail.links.find((l) => l.includes('/invites/accept#token='))
  expect(link, mail.text).toBeDefined()
  return { invite: res.body.invite, token: tokenOf(link!), mail, link: link! }
}

describe('invitations', () => {
  it('e-mails a link through SMTP, and a new person signs up with the invited address and joins', async () => {
    const { owner, projectId } = await ownerWithProject('Boathouse hatch')
    const email = address('newcomer')
    const { invite: created, token, mail, link } = await invite(owner.agent, projectId, email, 'measurer')
    expect(created).toMatchObject({ email, role: 'measurer', status: 'pending', invitedBy: 'Odile Owner' })
    expect(new Date(created.expiresAt).getTime() - Date.now()).toBeGreaterThan(6.9 * 24 * 3600_000)
    expect(mail.subject).toBe('Odile Owner invites you to "Boathouse hatch" on Spanmark')
    expect(mail.text).toMatch(/as a measurer/)
    expect(new URL(link).pathname).toBe('/invites/accept')
    expect(new URL(link).search).toBe('')

    // Stored only as its SHA-256; the sent message's body is not kept in the outbox either.
    const row = await t.server.services.db.selectFrom('invites').selectAll().where('id', '=', created.id).executeTakeFirstOrThrow()
    expect(row.token_hash).toBe(crypto.createHash('sha256').update(token).digest('hex'))
    const outbox = await t.server.services.db.selectFrom('mail_outbox').selectAll().where('to_address', '=', email).execute()
    expect(outbox.map((m) => [m.text_body, m.sent_at !== null])).toEqual([['', true]])

    const looked = await t.agent().post('/api/invites/lookup').send({ token }).expect(200)
    expect(looked.body).toEqual({
      invite: { email, role: 'measurer', projectName: 'Boathouse hatch', invitedBy: 'Odile Owner', expiresAt: created.expiresAt },
      accountExists: false,
    })
    // Without an account there is nobody to join yet.
    await t.agent().post('/api/invites/accept').send({ token }).expect(401)

    const { agent } = await signUpAs(t, email, 'Nell Newcomer')
    const joined = await agent.post('/api/invites/accept').send({ token }).expect(200)
    expect(joined.body).toEqual({ projectId, role: 'measurer' })
    expect((await agent.get(`/api/projects/${projectId}`).expect(200)).body.project.role).toBe('measurer')
    // A reload of the page accepts again: the same answer, nothing new.
    await agent.post('/api/invites/accept').send({ token }).expect(200)
    expect((await owner.agent.get(`/api/projects/${projectId}/invites`).expect(200)).body.invites).toEqual([])
    const again = await t.agent().post('/api/invites/lookup').send({ token }).expect(400)
    expect(again.body.error).toMatchObject({ code: 'invalid-token', field: 'token' })
    expect(again.body.error.message).toMatch(/used already/)
  })

  it('lets an existing account sign in and join, and says an account exists', async () => {
    const { owner, projectId } = await ownerWithProject()
    const person = await signUpAgent(t, 'Esme Existing')
    const { token } = await invite(owner.agent, projectId, person.email.toUpperCase(), 'mentor')
    const looked = await t.agent().post('/api/invites/lookup').send({ token }).expect(200)
    expect(looked.body.accountExists).toBe(true)
    expect(looked.body.invite.email).toBe(person.email)
    const agent = t.agent()
    await agent.post('/api/auth/sign-in').send({ email: person.email, password: person.password }).expect(200)
    expect((await agent.post('/api/invites/accept').send({ token }).expect(200)).body).toEqual({ projectId, role: 'mentor' })
    const members = (await owner.agent.get(`/api/projects/${projectId}/members`).expect(200)).body.members
    expect(members.map((m: { email: string; role: string }) => [m.email, m.role])).toContainEqual([person.email, 'mentor'])
  })

  it('refuses an account with another e-mail, naming both addresses, and joins nobody', async () => {
    const { owner, projectId } = await ownerWithProject()
    const email = address('intended')
    const { token } = await invite(owner.agent, projectId, email)
    const other = await signUpAgent(t, 'Wrong Person')
    const res = await other.agent.post('/api/invites/accept').send({ token }).expect(403)
    expect(res.body.error.code).toBe('wrong-account')
    expect(res.body.error.message).toContain(email)
    expect(res.body.error.message).toContain(other.email)
    await other.agent.get(`/api/projects/${projectId}`).expect(404)
    // The invitation is still there for its addressee.
    await t.agent().post('/api/invites/lookup').send({ token }).expect(200)
  })

  it('sends again with a new link; the old one stops working with a message that says why', async () => {
    const { owner, projectId } = await ownerWithProject()
    const email = address('resent')
    const first = await invite(owner.agent, projectId, email)
    await t.server.services.db.updateTable('invites').set({ expires_at: new Date(Date.now() + 3600_000) }).where('id', '=', first.invite.id).execute()
    const since = new Date()
    const res = await owner.agent.post(`/api/invites/${first.invite.id}/resend`).expect(200)
    expect(res.body.invite.id).toBe(first.invite.id)
    expect(new Date(res.body.invite.expiresAt).getTime() - Date.now()).toBeGreaterThan(6.9 * 24 * 3600_000)
    expect(new Date(res.body.invite.lastSentAt).getTime()).toBeGreaterThanOrEqual(new Date(first.invite.lastSentAt).getTime())
    const second = tokenOf((await t.waitForMail(email, since)).links.find((l) => l.includes('#token='))!)
    expect(second).not.toBe(first.token)
    const old = await t.agent().post('/api/invites/lookup').send({ token: first.token }).expect(400)
    expect(old.body.error.message).toMatch(/newer invitation/)
    const { agent } = await signUpAs(t, email, 'Rhea Resent')
    expect((await agent.post('/api/invites/accept').send({ token: first.token }).expect(400)).body.error.message).toMatch(/newer invitation/)
    await agent.post('/api/invites/accept').send({ token: second }).expect(200)
    const accepted = await owner.agent.post(`/api/invites/${first.invite.id}/resend`).expect(409)
    expect(accepted.body.error.message).toMatch(/accepted already/)
    expect((await owner.agent.delete(`/api/invites/${first.invite.id}`).expect(409)).body.error.message).toMatch(/remove the member/)
  })

  it('withdraws an invitation: its link says so, and it leaves the list', async () => {
    const { owner, projectId } = await ownerWithProject()
    const email = address('withdrawn')
    const { invite: created, token } = await invite(owner.agent, projectId, email)
    await owner.agent.delete(`/api/invites/${created.id}`).expect(204)
    const res = await t.agent().post('/api/invites/lookup').send({ token }).expect(400)
    expect(res.body.error.message).toMatch(/withdrawn/)
    const { agent } = await signUpAs(t, email, 'Wyn Withdrawn')
    expect((await agent.post('/api/invites/accept').send({ token }).expect(400)).body.error.message).toMatch(/withdrawn/)
    await agent.get(`/api/projects/${projectId}`).expect(404)
    expect((await owner.agent.get(`/api/projects/${projectId}/invites`).expect(200)).body.invites).toEqual([])
    expect((await owner.agent.post(`/api/invites/${created.id}/resend`).expect(409)).body.error.message).toMatch(/withdrawn/)
  })

  it('refuses an expired invitation, lists it as expired, and a resend brings it back', async () => {
    const { owner, projectId } = await ownerWithProject()
    const email = address('late')
    const { invite: created, token } = await invite(owner.agent, projectId, email)
    await t.server.services.db.updateTable('invites').set({ expires_at: new Date(Date.now() - 1000) }).where('id', '=', created.id).execute()
    expect((await t.agent().post('/api/invites/lookup').send({ token }).expect(400)).body.error.message).toMatch(/expired.*send it again/)
    const listed = (await owner.agent.get(`/api/projects/${projectId}/invites`).expect(200)).body.invites
    expect(listed).toEqual([expect.objectContaining({ id: created.id, status: 'expired' })])
    // An expired invitation does not block a new one: the new one replaces it.
    const fresh = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email, role: 'mentor' }).expect(201)
    expect((await owner.agent.get(`/api/projects/${projectId}/invites`).expect(200)).body.invites).toEqual([expect.objectContaining({ id: fresh.body.invite.id, status: 'pending', role: 'mentor' })])
    expect((await t.agent().post('/api/invites/lookup').send({ token }).expect(400)).body.error.message).toMatch(/expired/)
  })

  it('answers 409 for someone already a member and for an address with an invitation waiting', async () => {
    const { owner, projectId } = await ownerWithProject()
    const member = await signUpAgent(t, 'Mo Member')
    await joinProject(t, owner.agent, projectId, member, 'measurer')
    const dup = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: member.email, role: 'mentor' }).expect(409)
    expect(dup.body.error).toMatchObject({ code: 'conflict', field: 'email' })
    expect(dup.body.error.message).toBe(`Mo Member (${member.email}) is already a member of this project.`)
    const self = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: owner.email, role: 'mentor' }).expect(409)
    expect(self.body.error.message).toMatch(/already a member/)
    const email = address('waiting')
    await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email, role: 'mentor' }).expect(201)
    const waiting = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: ` ${email.toUpperCase()} `, role: 'measurer' }).expect(409)
    expect(waiting.body.error).toMatchObject({ code: 'conflict', field: 'email' })
    expect(waiting.body.error.message).toMatch(/already waiting.*Send it again, or withdraw it/)
    // Two owners inviting one address at the same moment make one invitation.
    const twice = address('race')
    const results = await Promise.all([0, 1].map(() => owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: twice, role: 'mentor' })))
    expect(results.map((r) => r.status).sort()).toEqual([201, 409])
  })

  it('takes only measurer and mentor, and validates the address', async () => {
    const { owner, projectId } = await ownerWithProject()
    for (const role of ['owner', 'guest', 'boss']) {
      const res = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: address('role'), role }).expect(400)
      expect(res.body.error.field).toBe('role')
      expect(res.body.error.message).toMatch(/measurer, mentor/)
    }
    const bad = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: 'not an address', role: 'mentor' }).expect(400)
    expect(bad.body.error.message).toMatch(/^body\.email: /)
    const token = await t.agent().post('/api/invites/lookup').send({ token: 'short' }).expect(400)
    expect(token.body.error.field).toBe('token')
    const unknown = await t.agent().post('/api/invites/lookup').send({ token: crypto.randomBytes(32).toString('base64url') }).expect(400)
    expect(unknown.body.error.code).toBe('invalid-token')
  })

  it('rate-limits invitations per person with a 429 in the error shape', async () => {
    const limited = await startTestServer({ rateLimits: { ...t.config.rateLimits, invite: { windowMs: 60_000, limit: 3 } } })
    try {
      const owner = await signUpAgent(limited, 'Busy Owner')
      const projectId = (await owner.agent.post('/api/projects').send({ name: 'Limited' }).expect(201)).body.project.id
      for (let i = 0; i < 3; i++) await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: address('many'), role: 'mentor' }).expect(201)
      const res = await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: address('many'), role: 'mentor' }).expect(429)
      expect(res.body.error.code).toBe('too-many-requests')
      expect(res.body.error.message).toMatch(/Too many invitations and viewing passes from you/)
      // Another owner (another key) is not held back by the first one's count.
      const other = await signUpAgent(limited, 'Calm Owner')
      const theirs = (await other.agent.post('/api/projects').send({ name: 'Theirs' }).expect(201)).body.project.id
      await other.agent.post(`/api/projects/${theirs}/invites`).send({ email: address('one'), role: 'mentor' }).expect(201)
    } finally {
      await limited.stop()
    }
  })
})
