import { z } from 'zod'

/**
 * Everything the server reads from its environment, parsed once. Three modes: development (`npm start`:
 * local fakes, the dev mailbox), test (cheap hashing, loose rate limits) and production.
 */
const Flag = z.enum(['0', '1', 'true', 'false']).transform((v) => v === '1' || v === 'true')

const Env = z.object({
  SPANMARK_ENV: z.enum(['development', 'test', 'production']).default('development'),
  HOST: z.string().default('127.0.0.1'),
  PORT: z.coerce.number().int().min(0).max(65535).default(5480),
  PUBLIC_URL: z.url().optional(),
  DATABASE_URL: z.string().min(1, { error: 'DATABASE_URL must name the PostgreSQL database' }),
  SMTP_HOST: z.string().default('127.0.0.1'),
  SMTP_PORT: z.coerce.number().int().min(0).max(65535).default(2525),
  MAIL_FROM: z.string().default('Spanmark <no-reply@spanmark.example>'),
  MAIL_FAKE: Flag.default(false),
  SEED_DEMO: Flag.default(false),
  TRUST_PROXY: z.string().optional(),
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).optional(),
})

export interface RateLimit {
  windowMs: number
  limit: number
}

export interface Config {
  env: 'development' | 'test' | 'production'
  host: string
  port: number
  /** Origin used in e-mailed links; defaults to the listening address. */
  publicUrl: string | null
  databaseUrl: string
  mail: { host: string; port: number; from: string; fake: boolean }
  seedDemo: boolean
  devMail: boolean
  secureCookies: boolean
  trustProxy: string | boolean
  logLevel: string
  argon2: { memoryCost: number; timeCost: number; parallelism: number }
  rateLimits: { signIn: RateLimit; passwordReset: RateLimit; signUp: RateLimit }
  jsonLimit: string
  passwordResetTtlMs: number
  clientDir: string
}

/** OWASP's argon2id minimum (19 MiB, 2 passes, 1 lane). Tests use less so that suites stay fast. */
export const PRODUCTION_ARGON2 = { memoryCost: 19456, timeCost: 2, parallelism: 1 }
export const PRODUCTION_RATE_LIMITS = {
  signIn: { windowMs: 15 * 60_000, limit: 10 },
  passwordReset: { windowMs: 60 * 60_000, limit: 5 },
  signUp: { windowMs: 60 * 60_000, limit: 20 },
}

export function loadConfig(source: NodeJS.ProcessEnv = process.env): Config {
  const parsed = Env.safeParse(source)
  if (!parsed.success) {
    const issues = parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')
    throw new Error(`bad environment: ${issues}`)
  }
  const e = parsed.data
  const test = e.SPANMARK_ENV === 'test'
  const production = e.SPANMARK_ENV === 'production'
  const publicUrl = e.PUBLIC_URL ?? null
  return {
    env: e.SPANMARK_ENV,
    host: e.HOST,
    port: e.PORT,
    publicUrl,
    databaseUrl: e.DATABASE_URL,
    mail: { host: e.SMTP_HOST, port: e.SMTP_PORT, from: e.MAIL_FROM, fake: e.MAIL_FAKE && !production },
    seedDemo: e.SEED_DEMO,
    devMail: !production,
    secureCookies: publicUrl?.startsWith('https://') ?? false,
    trustProxy: e.TRUST_PROXY === undefined ? false : e.TRUST_PROXY === 'true' ? true : e.TRUST_PROXY,
    logLevel: e.LOG_LEVEL ?? (test ? 'silent' : 'info'),
    argon2: test ? { memoryCost: 1024, timeCost: 1, parallelism: 1 } : PRODUCTION_ARGON2,
    rateLimits: test
      ? { signIn: { windowMs: 60_000, limit: 10_000 }, passwordReset: { windowMs: 60_000, limit: 10_000 }, signUp: { windowMs: 60_000, limit: 10_000 } }
      : PRODUCTION_RATE_LIMITS,
    jsonLimit: '256kb',
    passwordResetTtlMs: 60 * 60_000,
    clientDir: new URL('../dist', import.meta.url).pathname,
  }
}
