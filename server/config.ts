import os from 'node:os'
import path from 'node:path'
import { projectRoot } from './paths'
import { PRODUCTION_LIVE_LIMITS, type LiveLimits } from './collab/limits'
import { z } from 'zod'

/**
 * Everything the server reads from its environment, parsed once. Three modes: development (`npm start`:
 * local fakes), test (cheap hashing, loose rate limits) and production.
 *
 * The development conveniences (the dev mailbox: a fake SMTP server that keeps every mail in `dev_mail`,
 * shown at `/dev/mail`; the demo seeding) run only when asked for by their flag (`SPANMARK_DEV_MAILBOX=1`,
 * `SPANMARK_DEMO=1`, or `SPANMARK_DEV=1` for both) and only on a loopback listener; a production server
 * refuses to start with either asked for.
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
  /** Test servers only: whether the fake SMTP server runs (elsewhere it runs with the dev mailbox). */
  MAIL_FAKE: Flag.default(false),
  SPANMARK_DEV: Flag.default(false),
  SPANMARK_DEV_MAILBOX: Flag.optional(),
  SPANMARK_DEMO: Flag.optional(),
  TRUST_PROXY: z.string().optional(),
  S3_ENDPOINT: z.url().optional(),
  S3_REGION: z.string().default('us-east-1'),
  S3_BUCKET: z.string().default('spanmark-originals'),
  S3_ACCESS_KEY_ID: z.string().default('S3RVER'),
  S3_SECRET_ACCESS_KEY: z.string().default('S3RVER'),
  S3_FAKE: Flag.default(false),
  S3_FAKE_PORT: z.coerce.number().int().min(0).max(65535).default(4569),
  DATA_DIR: z.string().optional(),
  UPLOAD_LIMIT_BYTES: z.coerce.number().int().positive().default(2 * 1024 ** 3),
  /** The largest file a resumable upload (S3 multipart, straight to object storage) takes: 100 GiB. */
  UPLOAD_RESUMABLE_LIMIT_BYTES: z.coerce.number().int().positive().default(100 * 1024 ** 3),
  LAZ_LIMIT_BYTES: z.coerce.number().int().positive().default(512 * 1024 ** 2),
  WORKER: z.enum(['spawn', 'none']).default('spawn'),
  WORKERS: z.coerce.number({ error: 'must be a whole number from 1 to 16' }).int({ error: 'must be a whole number from 1 to 16' }).min(1, { error: 'must be a whole number from 1 to 16' }).max(16, { error: 'must be a whole number from 1 to 16' }).default(1),
  /** Worker threads for heavy marker checks; default: the machine's cores less one, at least 1. */
  COMPUTE_THREADS: z.coerce.number().int().min(1, { error: 'COMPUTE_THREADS must be at least 1' }).max(256).optional(),
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).optional(),
  LOG_FORMAT: z.enum(['pretty', 'json'], { error: 'must be pretty or json' }).optional(),
  /** Test servers only: every marker check waits this long first (a fault test kills its holder meanwhile). */
  SPANMARK_TEST_CHECK_DELAY_MS: z.coerce.number().int().min(0).max(600_000).default(0),
})

/**
 * Resumable uploads (services/uploads.ts). Parts are at least `minPartBytes` (16 MiB; smaller in tests only)
 * and grow so a file of `limitBytes` stays within object storage's 10,000 parts. A part URL lives
 * `partUrlSeconds`; an upload untouched for `idleMs` is abandoned by the sweeper (every `sweepMs`).
 */
export interface ResumableUploads {
  limitBytes: number
  minPartBytes: number
  partUrlSeconds: number
  idleMs: number
  sweepMs: number
}

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
  /** Seeds the demo project into an empty database (SPANMARK_DEMO). */
  seedDemo: boolean
  /** The dev mailbox: mail kept by the fake SMTP server and its /dev/mail page and API (SPANMARK_DEV_MAILBOX). */
  devMail: boolean
  secureCookies: boolean
  /**
   * Express's `trust proxy`: which proxies' X-Forwarded-For to believe for `req.ip`, which keys the rate
   * limits. Off by default (the header is ignored); a hop count (`1`), or names and addresses
   * (`loopback`, `10.0.0.0/8`, comma-separated).
   */
  trustProxy: string | number | boolean
  logLevel: string
  /**
   * 'pretty': one readable line per event (a person at a terminal); 'json': one JSON object per line (log
   * collectors). Default: pretty when standard output is a terminal outside production, else json.
   */
  logFormat: 'pretty' | 'json'
  argon2: { memoryCost: number; timeCost: number; parallelism: number }
  /** invite: invitations and viewing passes sent, per person; tokenUse: e-mailed links looked up, accepted or opened, per address. */
  rateLimits: { signIn: RateLimit; passwordReset: RateLimit; signUp: RateLimit; invite: RateLimit; tokenUse: RateLimit; upload: RateLimit }
  /** What one check, project, scene or scan may cost the server (README, "Security and limits"). */
  limits: CostLimits
  jsonLimit: string
  passwordResetTtlMs: number
  /** How long an address confirmation link works. */
  emailConfirmTtlMs: number
  /**
   * Failed sign-ins for one address: the first `free` cost nothing; after that the address must wait
   * `baseMs`, doubling with every further failure up to `capMs`, after its last failure (429 with
   * Retry-After until then). A correct password after the wait signs in: nobody is locked out.
   */
  signInDelay: { free: number; baseMs: number; capMs: number }
  clientDir: string
  /** Folder for local state that is not in PostgreSQL: upload spool, the fake S3's files. */
  dataDir: string
  storage: { endpoint: string | null; region: string; bucket: string; accessKeyId: string; secretAccessKey: string; fake: boolean; fakePort: number }
  uploads: { limitBytes: number; lazLimitBytes: number; resumable: ResumableUploads }
  /** 'spawn' runs the ingest worker as a child process; 'none' leaves it to a separate `server/worker.ts`. */
  worker: 'spawn' | 'none'
  /** Ingest worker processes this server starts (WORKERS; they share the queue, a claim each per scan). */
  workers: number
  /**
   * The worker threads that run heavy marker checks (sections, openings, object outlines, clearance fits:
   * server/compute/pool.ts): how many at most (COMPUTE_THREADS; default cores - 1, at least 1), and how long
   * an idle one is kept.
   */
  compute: { threads: number; idleTimeoutMs: number }
  /** A processing scan whose worker has not beaten for this long is queued again. */
  exportProgressMs: number
  ingestStaleMs: number
  /** A live edit becomes a revision once its author has left the marker alone this long (2 s in production). */
  liveSettleMs: number
  /** What one live connection may cost (server/collab/limits.ts). */
  live: LiveLimits
  /**
   * E-mail to a marker's author about others' comments: one message per person gathers what arrived within
   * `gapMs` of the first waiting comment (5 min; short in tests); the job looks every `sweepMs`.
   */
  commentMail: { gapMs: number; sweepMs: number }
  /**
   * Work shared by several server processes (server/jobs/leases.ts): each process beats every `beatMs`; one
   * silent for `leaseMs` is dead and its held work (pending checks, refinements) is taken over by the sweep
   * every process runs every `sweepMs`.
   */
  cluster: { beatMs: number; leaseMs: number; sweepMs: number }
  /** Tests only (SPANMARK_TEST_CHECK_DELAY_MS): each marker check waits this long first; 0 elsewhere. */
  testCheckDelayMs: number
}

export interface CostLimits {
  /** Stored points one marker check may read (a section's slab over all its placements; a clearance's object). */
  checkPoints: number
  /** Background checks held in the queue per project; the rest wait, pending, in PostgreSQL. */
  checksQueuedPerProject: number
  markersPerScene: number
  /** Uploads of one project being received and stored at once (per server process). */
  uploadsInFlightPerProject: number
  /** Processing attempts of a scan; one more crash or stall after the last fails it. */
  ingestAttempts: number
  /**
   * Points of one scan the ingest worker holds in memory at most, whatever a project allows: half the
   * machine's memory at WORKER_BYTES_PER_POINT each (today's ingest keeps a scan whole in memory).
   */
  workerPoints: number
  /**
   * Bytes of decoded tiles (and their search grids) the server keeps for nearest-point searches, all scans
   * together: one least-recently-used budget, so memory does not grow with the number of scans open.
   */
  nearestCacheBytes: number
}

/**
 * Worker memory per point while a scan is ingested (positions, attributes, octree order and tiles in
 * flight): `npm run bench` measured 2.2 GB of worker RSS for 50 M points (44 bytes); 48 leaves room.
 */
export const WORKER_BYTES_PER_POINT = 48

/** Compute threads by default: the machine's cores less one (the event loop's), at least 1. */
export function defaultComputeThreads(cores = os.availableParallelism()): number {
  return Math.max(1, cores - 1)
}

/** The worker's ceiling on this machine (WORKER_MAX_POINTS overrides it). */
export function workerPointsCeiling(totalMemoryBytes = os.totalmem()): number {
  return Math.floor((totalMemoryBytes * 0.5) / WORKER_BYTES_PER_POINT)
}

export const PRODUCTION_LIMITS: CostLimits = {
  checkPoints: 10_000_000,
  checksQueuedPerProject: 200,
  markersPerScene: 2000,
  uploadsInFlightPerProject: 3,
  ingestAttempts: 3,
  workerPoints: Number(process.env.WORKER_MAX_POINTS) > 0 ? Number(process.env.WORKER_MAX_POINTS) : workerPointsCeiling(),
  nearestCacheBytes: Number(process.env.NEAREST_CACHE_BYTES) > 0 ? Number(process.env.NEAREST_CACHE_BYTES) : 1024 ** 3,
}

/** OWASP's argon2id minimum (19 MiB, 2 passes, 1 lane). Tests use less so that suites stay fast. */
export const PRODUCTION_ARGON2 = { memoryCost: 19456, timeCost: 2, parallelism: 1 }
export const PRODUCTION_RATE_LIMITS = {
  signIn: { windowMs: 15 * 60_000, limit: 10 },
  passwordReset: { windowMs: 60 * 60_000, limit: 5 },
  signUp: { windowMs: 60 * 60_000, limit: 20 },
  invite: { windowMs: 60 * 60_000, limit: 30 },
  tokenUse: { windowMs: 15 * 60_000, limit: 30 },
  upload: { windowMs: 60 * 60_000, limit: 60 },
}

const LOOPBACK = new Set(['127.0.0.1', '::1', 'localhost', '[::1]'])

/** Whether a listener on `host` is reachable only from this machine. */
export function isLoopbackHost(host: string): boolean {
  return LOOPBACK.has(host.toLowerCase()) || /^127\.\d+\.\d+\.\d+$/.test(host)
}

/** 3 free failures, then 1 s, 2 s, 4 s ... up to 60 s between tries for that address. */
export const PRODUCTION_SIGN_IN_DELAY = { free: 3, baseMs: 1000, capMs: 60_000 }

function parseTrustProxy(value: string | undefined): string | number | boolean {
  if (value === undefined || value === '' || value === 'false') return false
  if (value === 'true') return true
  // Express reads a number as a hop count, but a string '1' as an address: make the count a number.
  if (/^\d+$/.test(value)) return Number(value)
  return value
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
  const devMail = e.SPANMARK_DEV_MAILBOX ?? e.SPANMARK_DEV
  const seedDemo = e.SPANMARK_DEMO ?? e.SPANMARK_DEV
  const asked = [devMail && 'SPANMARK_DEV_MAILBOX', seedDemo && 'SPANMARK_DEMO'].filter(Boolean).join(' and ')
  if (asked && production) {
    throw new Error(`bad environment: ${asked} (or SPANMARK_DEV) is a development convenience and is refused with SPANMARK_ENV=production; unset it`)
  }
  if (asked && !isLoopbackHost(e.HOST)) {
    throw new Error(`bad environment: ${asked} (or SPANMARK_DEV) needs a loopback listener (HOST 127.0.0.1, ::1 or localhost), not HOST=${e.HOST}`)
  }
  return {
    env: e.SPANMARK_ENV,
    host: e.HOST,
    port: e.PORT,
    publicUrl,
    databaseUrl: e.DATABASE_URL,
    mail: { host: e.SMTP_HOST, port: e.SMTP_PORT, from: e.MAIL_FROM, fake: test ? e.MAIL_FAKE : devMail },
    seedDemo,
    devMail,
    secureCookies: publicUrl?.startsWith('https://') ?? false,
    trustProxy: parseTrustProxy(e.TRUST_PROXY),
    logLevel: e.LOG_LEVEL ?? (test ? 'silent' : 'info'),
    logFormat: e.LOG_FORMAT ?? (!production && process.stdout.isTTY ? 'pretty' : 'json'),
    argon2: test ? { memoryCost: 1024, timeCost: 1, parallelism: 1 } : PRODUCTION_ARGON2,
    rateLimits: test
      ? {
          signIn: { windowMs: 60_000, limit: 10_000 },
          passwordReset: { windowMs: 60_000, limit: 10_000 },
          signUp: { windowMs: 60_000, limit: 10_000 },
          invite: { windowMs: 60_000, limit: 10_000 },
          tokenUse: { windowMs: 60_000, limit: 10_000 },
          upload: { windowMs: 60_000, limit: 10_000 },
        }
      : PRODUCTION_RATE_LIMITS,
    limits: PRODUCTION_LIMITS,
    jsonLimit: '256kb',
    passwordResetTtlMs: 60 * 60_000,
    emailConfirmTtlMs: 48 * 60 * 60_000,
    signInDelay: test ? { free: 3, baseMs: 300, capMs: 600 } : PRODUCTION_SIGN_IN_DELAY,
    clientDir: path.join(projectRoot, 'dist'),
    dataDir: e.DATA_DIR ?? path.join(projectRoot, '.data'),
    storage: {
      endpoint: e.S3_ENDPOINT ?? null,
      region: e.S3_REGION,
      bucket: e.S3_BUCKET,
      accessKeyId: e.S3_ACCESS_KEY_ID,
      secretAccessKey: e.S3_SECRET_ACCESS_KEY,
      fake: e.S3_FAKE && !production,
      fakePort: e.S3_FAKE_PORT,
    },
    uploads: {
      limitBytes: e.UPLOAD_LIMIT_BYTES,
      lazLimitBytes: e.LAZ_LIMIT_BYTES,
      resumable: test
        ? { limitBytes: e.UPLOAD_RESUMABLE_LIMIT_BYTES, minPartBytes: 64 * 1024, partUrlSeconds: 300, idleMs: 24 * 3_600_000, sweepMs: 60_000 }
        : { limitBytes: e.UPLOAD_RESUMABLE_LIMIT_BYTES, minPartBytes: 16 * 1024 ** 2, partUrlSeconds: 900, idleMs: 24 * 3_600_000, sweepMs: 10 * 60_000 },
    },
    worker: e.WORKER,
    workers: e.WORKERS,
    compute: { threads: e.COMPUTE_THREADS ?? defaultComputeThreads(), idleTimeoutMs: 30_000 },
    ingestStaleMs: test ? 3000 : 30_000,
    // How often a running export writes its progress; tests see it move on small scans.
    exportProgressMs: test ? 10 : 250,
    liveSettleMs: test ? 300 : 2000,
    // Tests leave rooms in memory a moment only, so a test of unloading does not wait half a minute.
    live: test ? { ...PRODUCTION_LIVE_LIMITS, unloadGraceMs: 500 } : PRODUCTION_LIVE_LIMITS,
    commentMail: test ? { gapMs: 1500, sweepMs: 200 } : { gapMs: 5 * 60_000, sweepMs: 15_000 },
    cluster: test ? { beatMs: 200, leaseMs: 1200, sweepMs: 250 } : { beatMs: 2000, leaseMs: 10_000, sweepMs: 2000 },
    testCheckDelayMs: test ? e.SPANMARK_TEST_CHECK_DELAY_MS : 0,
  }
}
