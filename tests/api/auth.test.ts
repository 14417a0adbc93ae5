import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

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
