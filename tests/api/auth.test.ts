import crypto from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'
import { hashSecret } from '../../server/auth/tokens'
import { insertPasswordReset } from '../../server/repositories/passwordResets'
import { CLOSE_CODES } from '@shared/collab/documents'
import { liveClient } from '../utils/live'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer()
})
afterAll(async () => {
  await t?.stop()
})

describe('accounts', () => {
  it('signs up, reads /api/me, signs out', async () => {
    const { agent, email } = await signUpAgent(t, 'Ada Test')
    const me = await agent.get('/api/me').expect(200)
    expect(me.body.user).toMatchObject({ email, name: 'Ada Test' })
    expect(me.body.user).not.toHaveProperty('passwordHash')
    await agent.post('/api/auth/sign-out').expect(204)
    await agent.get('/api/me').expect(401)
  })

  it('sets an HttpOnly, SameSite=Lax session cookie that is not Secure over plain http', async () => {
    const res = await t.agent().post('/api/auth/sign-up').send({ email: 'cookie@spanmark.example', password: 'long enough pw', name: 'C' }).expect(201)
    const cookie = String(res.headers['set-cookie'])
    expect(cookie).toMatch(/spanmark_session=/)
    expect(cookie).toMatch(/HttpOnly/)
    expect(cookie).toMatch(/SameSite=Lax/)
    expect(cookie).not.toMatch(/Secure/)
  })

  it('lowercases e-mail and refuses a second account for it with 409 on the email field', async () => {
    await t.agent().post('/api/auth/sign-up').send({ email: 'Twice@Spanmark.example', password: 'long enough pw', name: 'T' }).expect(201)
    const res = await t.agent().post('/api/auth/sign-up').send({ email: 'twice@spanmark.example', password: 'long enough pw', name: 'T' }).expect(409)
    expect(res.body.error).toMatchObject({ code: 'conflict', field: 'email' })
  })

  it('names the bad field in a 400', async () => {
    const res = await t.agent().post('/api/auth/sign-up').send({ email: 'not-an-email', password: 'long enough pw', name: 'X' }).expect(400)
    expect(res.body.error.code).toBe('invalid-input')
    expect(res.body.error.field).toBe('email')
    expect(res.body.error.message).toMatch(/^body\.email: /)
    const short = await t.agent().post('/api/auth/sign-up').send({ email: 'a@spanmark.example', password: 'short', name: 'X' }).expect(400)
    expect(short.body.error.field).toBe('password')
    expect(short.body.error.message).toMatch(/at least 10/)
  })

  it('answers a wrong password and an unknown e-mail alike', async () => {
    const { email } = await signUpAgent(t)
    const wrong = await t.agent().post('/api/auth/sign-in').send({ email, password: 'not the password' }).expect(401)
    const unknown = await t.agent().post('/api/auth/sign-in').send({ email: 'nobody@spanmark.example', password: 'not the password' }).expect(401)
    expect(wrong.body).toEqual(unknown.body)
    expect(wrong.body.error.code).toBe('invalid-credentials')
  })

  it('signs in with the right password', async () => {
    const { email, password } = await signUpAgent(t)
    const agent = t.agent()
    await agent.post('/api/auth/sign-in').send({ email: email.toUpperCase(), password }).expect(200)
    await agent.get('/api/me').expect(200)
  })

  it('renames the current user', async () => {
    const { agent } = await signUpAgent(t)
    const res = await agent.patch('/api/me').send({ name: '  New Name  ' }).expect(200)
    expect(res.body.user.name).toBe('New Name')
  })

  it('changes the password, signs out other sessions, keeps this one, and tells the person by e-mail', async () => {
    const { agent, email, password } = await signUpAgent(t)
    const other = t.agent()
    await other.post('/api/auth/sign-in').send({ email, password }).expect(200)
    const bad = await agent.post('/api/me/password').send({ currentPassword: 'wrong one', newPassword: 'a brand new password' }).expect(400)
    expect(bad.body.error.field).toBe('currentPassword')
    const since = new Date()
    await agent.post('/api/me/password').send({ currentPassword: password, newPassword: 'a brand new password' }).expect(204)
    await agent.get('/api/me').expect(200)
    await other.get('/api/me').expect(401)
    await t.agent().post('/api/auth/sign-in').send({ email, password: 'a brand new password' }).expect(200)
    expect((await t.waitForMail(email, since)).subject).toMatch(/password was changed/)
  })

  it('voids every outstanding reset link when the password changes, and when one link is used (issue 12, point 9)', async () => {
    const { agent, email, password, user } = await signUpAgent(t, 'Void Links')
    const db = t.server.services.db
    const later = new Date(Date.now() + 3600_000)
    // Two links e-mailed earlier (tokens stored as SHA-256, as the service stores them).
    const [first, second, third] = ['first-reset-token', 'second-reset-token', 'third-reset-token'].map((v) => `${v}-${process.pid}`)
    await insertPasswordReset(db, user.id, hashSecret(first!), later)
    await insertPasswordReset(db, user.id, hashSecret(second!), later)
    await agent.post('/api/me/password').send({ currentPassword: password, newPassword: 'changed after the links' }).expect(204)
    for (const token of [first, second]) {
      const res = await t.agent().post('/api/auth/password-reset/confirm').send({ token, password: 'set through an old link' }).expect(400)
      expect(res.body.error).toMatchObject({ code: 'invalid-token', field: 'token' })
    }
    await t.agent().post('/api/auth/sign-in').send({ email, password: 'changed after the links' }).expect(200)

    // Using one link voids the others.
    await insertPasswordReset(db, user.id, hashSecret(first! + 'x'), later)
    await insertPasswordReset(db, user.id, hashSecret(third!), later)
    await t.agent().post('/api/auth/password-reset/confirm').send({ token: third, password: 'set through the third' }).expect(200)
    await t.agent().post('/api/auth/password-reset/confirm').send({ token: first! + 'x', password: 'set through another' }).expect(400)
    await t.agent().post('/api/auth/sign-in').send({ email, password: 'set through the third' }).expect(200)
  })

  it('refuses an Origin with the right host but another scheme, over REST and at the socket (issue 12, point 9)', async () => {
    // RFC 6454 section 5: same origin means same scheme, host and port.
    const { agent } = await signUpAgent(t, 'Scheme Check')
    const wrongScheme = t.url.replace(/^http:/, 'https:')
    const res = await agent.post('/api/auth/sign-out').set('Origin', wrongScheme).expect(403)
    expect(res.body.error.code).toBe('bad-origin')
    await agent.get('/api/me').expect(200)
    const client = liveClient(t.url, null, crypto.randomUUID(), wrongScheme)
    const code = await new Promise<number>((resolve) =>
      client.provider.on('connection-close', (event: CloseEvent | null) => {
        client.provider.shouldConnect = false
        resolve(event?.code ?? -1)
      }),
    )
    client.provider.destroy()
    expect(code).toBe(CLOSE_CODES.badOrigin)
    await agent.post('/api/auth/sign-out').set('Origin', t.url).expect(204)
  })

  it('resets a password through the e-mailed link, once', async () => {
    const { email, agent: oldSession } = await signUpAgent(t, 'Reset Me')
    await t.agent().post('/api/auth/password-reset').send({ email }).expect(202)
    const mail = await t.waitForMail(email)
    expect(mail.subject).toBe('Reset your Spanmark password')
    const link = mail.links.find((l) => l.includes('/reset-password#token='))
    expect(link).toBeDefined()
    // The token is in the fragment: it never reaches the server in a request line.
    const token = new URL(link!).hash.replace('#token=', '')
    const agent = t.agent()
    await agent.post('/api/auth/password-reset/confirm').send({ token, password: 'reset password one' }).expect(200)
    await agent.get('/api/me').expect(200)
    await oldSession.get('/api/me').expect(401)
    const again = await t.agent().post('/api/auth/password-reset/confirm').send({ token, password: 'reset password two' }).expect(400)
    expect(again.body.error).toMatchObject({ code: 'invalid-token', field: 'token' })
    expect(again.body.error.message).toMatch(/used already/)
    await t.agent().post('/api/auth/sign-in').send({ email, password: 'reset password one' }).expect(200)
  })

  it('answers a reset request for an unknown address exactly as for a known one, and sends nothing', async () => {
    const res = await t.agent().post('/api/auth/password-reset').send({ email: 'ghost@spanmark.example' }).expect(202)
    expect(res.body).toEqual({ ok: true })
  })

  it('refuses an expired reset link with a message that says so', async () => {
    const { email } = await signUpAgent(t)
    await t.agent().post('/api/auth/password-reset').send({ email }).expect(202)
    const mail = await t.waitForMail(email)
    const token = new URL(mail.links[0]!).hash.replace('#token=', '')
    await t.server.services.db.updateTable('password_resets').set({ expires_at: new Date(Date.now() - 1000) }).execute()
    const res = await t.agent().post('/api/auth/password-reset/confirm').send({ token, password: 'whatever password' }).expect(400)
    expect(res.body.error.message).toMatch(/expired/)
  })

  it('stores argon2id hashes, never the password', async () => {
    const { email, password } = await signUpAgent(t)
    const row = await t.server.services.db.selectFrom('users').select('password_hash').where('email', '=', email).executeTakeFirstOrThrow()
    expect(row.password_hash.startsWith('$argon2id$')).toBe(true)
    expect(row.password_hash).not.toContain(password)
  })
})
