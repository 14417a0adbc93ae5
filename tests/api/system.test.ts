import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { loadConfig, PRODUCTION_ARGON2, PRODUCTION_RATE_LIMITS } from '../../server/config'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer()
})
afterAll(async () => {
  await t?.stop()
})

describe('the API surface', () => {
  it('reports health with the database', async () => {
    const res = await t.agent().get('/api/health').expect(200)
    expect(res.body).toMatchObject({ status: 'ok', database: 'up' })
  })

  it('answers unknown API routes with a 404 in the error shape', async () => {
    const res = await t.agent().get('/api/no/such/thing').expect(404)
    expect(res.body.error.code).toBe('not-found')
    expect(res.body.error.message).toMatch(/GET \/api\/no\/such\/thing/)
  })

  it('answers malformed JSON and oversize bodies with the error shape', async () => {
    const bad = await t.agent().post('/api/auth/sign-in').set('Content-Type', 'application/json').send('{"email":').expect(400)
    expect(bad.body.error.message).toMatch(/not valid JSON/)
    const big = await t.agent().post('/api/auth/sign-in').send({ email: 'a@b.example', password: 'x'.repeat(400_000) }).expect(413)
    expect(big.body.error.code).toBe('payload-too-large')
  })

  it('refuses a state-changing request from another origin, and a cookie request with no Origin', async () => {
    const { agent } = await signUpAgent(t)
    const foreign = await agent.post('/api/projects').set('Origin', 'http://evil.example').send({ name: 'x' }).expect(403)
    expect(foreign.body.error.code).toBe('bad-origin')
    const res = await agent.post('/api/projects').unset('Origin').send({ name: 'x' })
    expect(res.status).toBe(403)
    expect(res.body.error.code).toBe('bad-origin')
  })

  it('sends security headers and keeps the session cookie out of responses to others', async () => {
    const res = await t.agent().get('/api/health')
    expect(res.headers['content-security-policy']).toMatch(/default-src 'self'/)
    expect(res.headers['x-content-type-options']).toBe('nosniff')
    expect(res.headers['x-powered-by']).toBeUndefined()
  })

  it('serves the client for page routes', async () => {
    // `npm test` builds the client before vitest runs.
    const res = await t.agent().get('/projects/anything').expect(200)
    expect(res.text).toMatch(/<div id="app">/)
    expect(res.headers['cache-control']).toBe('no-cache')
  })
})

describe('settings', () => {
  // OWASP Password Storage Cheat Sheet: argon2id with m=19456 (19 MiB), t=2, p=1 as the minimum.
  it('uses full argon2id cost and strict rate limits in production', () => {
    const prod = loadConfig({ SPANMARK_ENV: 'production', DATABASE_URL: 'postgres://x/y' })
    expect(prod.argon2).toEqual({ memoryCost: 19456, timeCost: 2, parallelism: 1 })
    expect(prod.argon2).toEqual(PRODUCTION_ARGON2)
    expect(prod.rateLimits).toEqual(PRODUCTION_RATE_LIMITS)
    expect(prod.rateLimits.signIn.limit).toBeLessThanOrEqual(10)
    expect(prod.devMail).toBe(false)
    expect(prod.mail.fake).toBe(false)
  })

  it('marks cookies Secure when served over https', () => {
    expect(loadConfig({ DATABASE_URL: 'postgres://x/y', PUBLIC_URL: 'https://spanmark.example' }).secureCookies).toBe(true)
  })

  it('logs JSON lines in production and wherever standard output is not a terminal, unless LOG_FORMAT says otherwise', () => {
    const base = { DATABASE_URL: 'postgres://x/y' }
    expect(loadConfig({ ...base, SPANMARK_ENV: 'production' }).logFormat).toBe('json')
    // The suite's standard output is a pipe, not a terminal.
    expect(loadConfig(base).logFormat).toBe(process.stdout.isTTY ? 'pretty' : 'json')
    expect(loadConfig({ ...base, LOG_FORMAT: 'pretty' }).logFormat).toBe('pretty')
    expect(loadConfig({ ...base, SPANMARK_ENV: 'production', LOG_FORMAT: 'pretty' }).logFormat).toBe('pretty')
    expect(() => loadConfig({ ...base, LOG_FORMAT: 'colour' })).toThrow(/LOG_FORMAT.*must be pretty or json/)
  })

  it('names a bad environment variable', () => {
    expect(() => loadConfig({ DATABASE_URL: 'postgres://x/y', PORT: 'eighty' })).toThrow(/PORT/)
  })
})

describe('development conveniences', () => {
  const base = { DATABASE_URL: 'postgres://x/y' }

  it('are off by default', () => {
    const c = loadConfig(base)
    expect(c.devMail).toBe(false)
    expect(c.seedDemo).toBe(false)
    expect(c.mail.fake).toBe(false)
  })

  it('are refused in production, naming the setting', () => {
    expect(() => loadConfig({ ...base, SPANMARK_ENV: 'production', SPANMARK_DEV_MAILBOX: '1' })).toThrow(/SPANMARK_DEV_MAILBOX.*SPANMARK_ENV=production/)
    expect(() => loadConfig({ ...base, SPANMARK_ENV: 'production', SPANMARK_DEMO: '1' })).toThrow(/SPANMARK_DEMO.*SPANMARK_ENV=production/)
    expect(() => loadConfig({ ...base, SPANMARK_ENV: 'production', SPANMARK_DEV: '1' })).toThrow(/SPANMARK_ENV=production/)
  })

  it('are refused on a listener others can reach', () => {
    expect(() => loadConfig({ ...base, HOST: '0.0.0.0', SPANMARK_DEV_MAILBOX: '1' })).toThrow(/loopback.*HOST=0\.0\.0\.0/)
    expect(() => loadConfig({ ...base, HOST: '192.0.2.7', SPANMARK_DEMO: '1' })).toThrow(/SPANMARK_DEMO.*loopback/)
    expect(loadConfig({ ...base, HOST: '::1', SPANMARK_DEV: '1' })).toMatchObject({ devMail: true, seedDemo: true })
  })

  it('a server without the flags has no /dev/mail route and seeds no demo', async () => {
    const plain = await startTestServer({}, { SPANMARK_DEV_MAILBOX: '0' })
    try {
      expect(plain.config.devMail).toBe(false)
      const res = await plain.agent().get('/api/dev/mail').expect(404)
      expect(res.body.error.code).toBeDefined()
      await plain.agent().delete('/api/dev/mail').expect(404)
      const users = await plain.server.services.db.selectFrom('users').select('id').execute()
      expect(users).toEqual([])
    } finally {
      await plain.stop()
    }
  })

  it('a server refuses to start in production with the dev mailbox or the demo on', async () => {
    const { SpanmarkServer } = await import('../../server/runtime')
    const pino = (await import('pino')).default
    const prod = { ...loadConfig(base), env: 'production' as const, devMail: true }
    await expect(SpanmarkServer.start(prod, pino({ level: 'silent' }))).rejects.toThrow(/dev mailbox.*SPANMARK_ENV=production/)
    const open = { ...loadConfig(base), host: '0.0.0.0', seedDemo: true }
    await expect(SpanmarkServer.start(open, pino({ level: 'silent' }))).rejects.toThrow(/demo seeding.*loopback/)
  })
})

describe('rate limits', () => {
  it('limits sign-in attempts with a 429 in the error shape', async () => {
    const limited = await startTestServer({ rateLimits: { ...t.config.rateLimits, signIn: { windowMs: 60_000, limit: 3 }, passwordReset: { windowMs: 60_000, limit: 2 }, signUp: { windowMs: 60_000, limit: 100 } } })
    try {
      // Different addresses each time: this is the per-IP limit, not the per-address slow-down (auth.test.ts).
      for (let i = 0; i < 3; i++) await limited.agent().post('/api/auth/sign-in').send({ email: `x${i}@spanmark.example`, password: 'nope' }).expect(401)
      const res = await limited.agent().post('/api/auth/sign-in').send({ email: 'x9@spanmark.example', password: 'nope' }).expect(429)
      expect(res.body.error.code).toBe('too-many-requests')
      for (let i = 0; i < 2; i++) await limited.agent().post('/api/auth/password-reset').send({ email: 'x@spanmark.example' }).expect(202)
      await limited.agent().post('/api/auth/password-reset').send({ email: 'x@spanmark.example' }).expect(429)
      // Without TRUST_PROXY a forwarded address is ignored: a client cannot buy a fresh budget by naming one.
      expect(limited.config.trustProxy).toBe(false)
      await limited.agent().post('/api/auth/password-reset').set('X-Forwarded-For', '203.0.113.9').send({ email: 'x@spanmark.example' }).expect(429)
    } finally {
      await limited.stop()
    }
  })

  it('behind a proxy (TRUST_PROXY=1), keys the limits by the forwarded client address', async () => {
    // Express "trust proxy": a number is the count of proxy hops whose X-Forwarded-For entries are believed.
    const proxied = await startTestServer({ rateLimits: { ...t.config.rateLimits, passwordReset: { windowMs: 60_000, limit: 2 } } }, { TRUST_PROXY: '1' })
    try {
      expect(proxied.config.trustProxy).toBe(1)
      const reset = (client: string) => proxied.agent().post('/api/auth/password-reset').set('X-Forwarded-For', client).send({ email: 'x@spanmark.example' })
      for (let i = 0; i < 2; i++) expect((await reset('203.0.113.1')).status).toBe(202)
      expect((await reset('203.0.113.1')).status).toBe(429)
      // Another client behind the same proxy has a budget of its own.
      expect((await reset('203.0.113.2')).status).toBe(202)
      // Only the last hop is believed: a client prepending a made-up address is still itself.
      expect((await reset('198.51.100.7, 203.0.113.1')).status).toBe(429)
    } finally {
      await proxied.stop()
    }
  })
})
