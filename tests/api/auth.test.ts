import crypto from 'node:crypto'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { confirmationLink, signUpAgent, startTestServer, tokenOf, type TestServer } from '../utils/server'
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

  it('sets an HttpOnly, SameSite=Lax session cookie that is not Secure over plain http, on confirming', async () => {
    const email = 'cookie@spanmark.example'
    const since = new Date()
    await t.agent().post('/api/auth/sign-up').send({ email, password: 'long enough pw', name: 'C' }).expect(202)
    const res = await t.agent().post('/api/auth/confirm-email').send({ token: tokenOf(await confirmationLink(t, email, since)) }).expect(200)
    const cookie = String(res.headers['set-cookie'])
    expect(cookie).toMatch(/spanmark_session=/)
    expect(cookie).toMatch(/HttpOnly/)
    expect(cookie).toMatch(/SameSite=Lax/)
    expect(cookie).not.toMatch(/Secure/)
  })

  it('keeps only the SHA-256 of a session id: the stored value is not a key that signs in', async () => {
    const { email, password, user } = await signUpAgent(t, 'Hash Test')
    await t.server.services.db.deleteFrom('sessions').where('user_id', '=', user.id).execute()
    const signedIn = await t.agent().post('/api/auth/sign-in').send({ email, password }).expect(200)
    const id = /spanmark_session=([^;]+)/.exec(String(signedIn.headers['set-cookie']))?.[1]
    expect(id).toBeTruthy()
    const rows = await t.server.services.db.selectFrom('sessions').select('id').where('user_id', '=', user.id).execute()
    // Node's own SHA-256 of the cookie's value (FIPS 180-4), computed here, not by the server's helper.
    expect(rows.map((r) => r.id)).toEqual([crypto.createHash('sha256').update(id!).digest('hex')])
    // Someone who read the table holds only the hash: sent as a cookie it opens nothing.
    await t.agent().get('/api/me').set('Cookie', `spanmark_session=${rows[0]!.id}`).expect(401)
    await t.agent().get('/api/me').set('Cookie', `spanmark_session=${id}`).expect(200)
  })

  it('keeps people signed in across the migration that hashes the stored session ids', async () => {
    const { up } = await import('../../migrations/20261205140000_hashed_sessions')
    const { user } = await signUpAgent(t, 'Before Hashing')
    const db = t.server.services.db
    // As the table was before the migration: a session stored under its raw id (this test's own row only;
    // the migration rewrites every row, so the others are set aside and put back as they were).
    const others = await db.deleteFrom('sessions').returningAll().execute()
    const raw = crypto.randomBytes(20).toString('hex')
    await db.insertInto('sessions').values({ id: raw, user_id: user.id, expires_at: new Date(Date.now() + 86_400_000) }).execute()
    try {
      await up(db)
      const stored = await db.selectFrom('sessions').select('id').execute()
      expect(stored.map((r) => r.id)).toEqual([crypto.createHash('sha256').update(raw).digest('hex')])
      await t.agent().get('/api/me').set('Cookie', `spanmark_session=${raw}`).expect(200)
    } finally {
      if (others.length) await db.insertInto('sessions').values(others).execute()
    }
  })

  it('lowercases e-mail and makes no second account for it', async () => {
    await t.agent().post('/api/auth/sign-up').send({ email: 'Twice@Spanmark.example', password: 'long enough pw', name: 'T' }).expect(202)
    await t.agent().post('/api/auth/sign-up').send({ email: 'twice@spanmark.example', password: 'other long pw', name: 'T2' }).expect(202)
    const rows = await t.server.services.db.selectFrom('users').select(['email', 'name']).where('email', 'ilike', 'twice@spanmark.example').execute()
    expect(rows).toEqual([{ email: 'twice@spanmark.example', name: 'T' }])
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

describe('sign-up reveals no account', () => {
  it('answers a taken address exactly as a free one: 202, same body, no session; the owner is told by e-mail', async () => {
    const owner = await signUpAgent(t, 'Taken Owner')
    const freeEmail = `free-${Date.now()}@spanmark.example`
    const since = new Date()
    const taken = await t.agent().post('/api/auth/sign-up').send({ email: owner.email, password: 'someone elses pw', name: 'Intruder' })
    const free = await t.agent().post('/api/auth/sign-up').send({ email: freeEmail, password: 'someone elses pw', name: 'Newcomer' })
    expect(taken.status).toBe(202)
    expect(free.status).toBe(202)
    expect(Object.keys(taken.body).sort()).toEqual(Object.keys(free.body).sort())
    expect(taken.body).toEqual({ email: owner.email, next: 'check-inbox' })
    expect(taken.headers['set-cookie']).toBeUndefined()
    expect(free.headers['set-cookie']).toBeUndefined()
    const note = await t.waitForMail(owner.email, since)
    expect(note.subject).toMatch(/tried to sign up/)
    expect(note.text).toMatch(/sign in/)
    expect(note.text).toMatch(/reset/)
    expect(note.links.some((l) => l.includes('/confirm-email'))).toBe(false)
    // The owner's password is untouched and the intruder's does not sign in.
    await t.agent().post('/api/auth/sign-in').send({ email: owner.email, password: 'someone elses pw' }).expect(401)
    await t.agent().post('/api/auth/sign-in').send({ email: owner.email, password: owner.password }).expect(200)
    expect((await t.waitForMail(freeEmail, since)).subject).toMatch(/Confirm your address/)
  })

  it('hashes the password on the taken path as well (the answer takes as long)', async () => {
    const owner = await signUpAgent(t)
    const hasher = t.server.services.hasher
    const original = hasher.hash.bind(hasher)
    let hashed = 0
    hasher.hash = async (p: string) => {
      hashed++
      return original(p)
    }
    try {
      await t.agent().post('/api/auth/sign-up').send({ email: owner.email, password: 'another long pw', name: 'Again' }).expect(202)
    } finally {
      hasher.hash = original
    }
    expect(hashed).toBe(1)
  })
})

describe('address confirmation', () => {
  it('stores the link only as its SHA-256, confirms once, signs in, and confirms the account', async () => {
    const email = `confirm-${Date.now()}@spanmark.example`
    const since = new Date()
    await t.agent().post('/api/auth/sign-up').send({ email, password: 'long enough pw', name: 'Cora Confirm' }).expect(202)
    const link = await confirmationLink(t, email, since)
    expect(link).toMatch(/\/confirm-email#token=/)
    const token = tokenOf(link)
    const rows = await t.server.services.db.selectFrom('email_confirmations').select('token_hash').execute()
    const { createHash } = await import('node:crypto')
    expect(rows.map((r) => r.token_hash)).toContain(createHash('sha256').update(token).digest('hex'))
    expect(rows.map((r) => r.token_hash)).not.toContain(token)
    const agent = t.agent()
    const confirmed = await agent.post('/api/auth/confirm-email').send({ token }).expect(200)
    expect(confirmed.body.user).toMatchObject({ email, emailConfirmed: true })
    expect((await agent.get('/api/me').expect(200)).body.user.emailConfirmed).toBe(true)
    const again = await t.agent().post('/api/auth/confirm-email').send({ token }).expect(400)
    expect(again.body.error).toMatchObject({ code: 'invalid-token', field: 'token' })
    expect(again.body.error.message).toMatch(/used already/)
  })

  it('lets an unconfirmed account sign in, refuses it an invitation with 403, and resends the link', async () => {
    const owner = await signUpAgent(t, 'Inviting Owner')
    const projectId = (await owner.agent.post('/api/projects').send({ name: 'Proof' }).expect(201)).body.project.id
    const fresh = await signUpAgent(t, 'Unconfirmed Una', { confirm: false })
    expect(fresh.user.emailConfirmed).toBe(false)
    const since = new Date()
    await owner.agent.post(`/api/projects/${projectId}/invites`).send({ email: fresh.email, role: 'measurer' }).expect(201)
    const invite = (await t.waitForMail(fresh.email, since)).links.find((l) => l.includes('/invites/accept#token='))!
    const refused = await fresh.agent.post('/api/invites/accept').send({ token: tokenOf(invite) }).expect(403)
    expect(refused.body.error.code).toBe('email-unconfirmed')
    expect(refused.body.error.message).toMatch(/Confirm your address/)
    expect(refused.body.error.message).toMatch(/resend/)
    await owner.agent.get(`/api/projects/${projectId}/members`).expect(200).then((r) => expect(r.body.members).toHaveLength(1))
    const resentSince = new Date()
    await fresh.agent.post('/api/me/confirm-email/resend').expect(202)
    const fresher = tokenOf(await confirmationLink(t, fresh.email, resentSince))
    await fresh.agent.post('/api/auth/confirm-email').send({ token: fresher }).expect(200)
    await fresh.agent.post('/api/invites/accept').send({ token: tokenOf(invite) }).expect(200)
    await fresh.agent.post('/api/me/confirm-email/resend').expect(409)
  })

  it('refuses a confirmation token that is not one, naming the field', async () => {
    const res = await t.agent().post('/api/auth/confirm-email').send({ token: 'x' }).expect(400)
    expect(res.body.error.field).toBe('token')
    const unknown = await t.agent().post('/api/auth/confirm-email').send({ token: 'a'.repeat(43) }).expect(400)
    expect(unknown.body.error.message).toMatch(/not known/)
  })
})

describe('failed sign-ins slow down per address', () => {
  // Test config: 3 free failures, then 300 ms doubling up to 600 ms.
  it('answers 429 with Retry-After after the free failures, and the right password signs in once the wait is over', async () => {
    const { email, password } = await signUpAgent(t)
    // The three free failures are answered at once; the third starts the wait.
    for (let i = 0; i < 3; i++) await t.agent().post('/api/auth/sign-in').send({ email, password: 'wrong password' }).expect(401)
    const early = await t.agent().post('/api/auth/sign-in').send({ email, password }).expect(429)
    expect(early.headers['retry-after']).toBe('1')
    expect(early.body.error.code).toBe('too-many-requests')
    // Another address is not slowed by this one.
    const other = await signUpAgent(t)
    await t.agent().post('/api/auth/sign-in').send({ email: other.email, password: other.password }).expect(200)
    const stored = await t.server.services.db.selectFrom('sign_in_failures').selectAll().where('email', '=', email).executeTakeFirstOrThrow()
    expect(stored.failures).toBe(3)
    await new Promise((r) => setTimeout(r, 320))
    // Never locked out: the right password after the wait signs in and clears the count.
    await t.agent().post('/api/auth/sign-in').send({ email, password }).expect(200)
    expect(await t.server.services.db.selectFrom('sign_in_failures').selectAll().where('email', '=', email).executeTakeFirst()).toBeUndefined()
  })

  it('slows an unknown address alike, so the delay tells nothing about accounts', async () => {
    const email = `nobody-${Date.now()}@spanmark.example`
    for (let i = 0; i < 3; i++) await t.agent().post('/api/auth/sign-in').send({ email, password: 'wrong password' }).expect(401)
    const early = await t.agent().post('/api/auth/sign-in').send({ email, password: 'wrong password' }).expect(429)
    expect(early.headers['retry-after']).toBe('1')
  })

  it('doubles the wait up to the cap', async () => {
    const { loadConfig, PRODUCTION_SIGN_IN_DELAY } = await import('../../server/config')
    expect(loadConfig({ DATABASE_URL: 'postgres://x/y', SPANMARK_ENV: 'production' }).signInDelay).toEqual(PRODUCTION_SIGN_IN_DELAY)
    const { email } = await signUpAgent(t)
    const db = t.server.services.db
    // Ten failures long ago, one just now: the wait is the cap (600 ms in tests), not 300 * 2^7.
    await db.insertInto('sign_in_failures').values({ email, failures: 10, last_failed_at: new Date() }).execute()
    const res = await t.agent().post('/api/auth/sign-in').send({ email, password: 'whatever' }).expect(429)
    expect(res.headers['retry-after']).toBe('1')
    await db.updateTable('sign_in_failures').set({ last_failed_at: new Date(Date.now() - 601) }).where('email', '=', email).execute()
    await t.agent().post('/api/auth/sign-in').send({ email, password: 'whatever' }).expect(401)
  })
})
