import http from 'node:http'
import path from 'node:path'
import type { AddressInfo } from 'node:net'
import type PgBoss from 'pg-boss'
import type pino from 'pino'
import { createLucia } from './auth/lucia'
import { createPasswordHasher } from './auth/password'
import { createApp } from './app'
import { isLoopbackHost, type Config } from './config'
import { createDb, createPool } from './db'
import { migrateToLatest } from './db/migrate'
import { seedDemo, seedDemoGuest } from './demo/seed'
import { startFakeS3, type FakeS3 } from './fakes/s3'
import { startFakeSmtp, type FakeSmtp } from './fakes/smtp'
import { failStaleExports } from './repositories/exports'
import { sendIngest, startBoss } from './jobs/queue'
import { WorkerSupervisor } from './jobs/supervisor'
import { CommentNoticeSender } from './mail/commentNotices'
import { Mailer } from './mail/mailer'
import { ScanIndexRegistry } from './points/scanIndexes'
import { openComputePool } from './compute/pool'
import { MarkerChecker } from './markers/checker'
import { RegistrationJobs } from './registration/jobs'
import { failOrphanedRefinements } from './services/registration'
import { ProcessLease } from './jobs/leases'
import { sweepRateLimits } from './middleware/rateLimitStore'
import { CollabServer } from './collab/socketServer'
import type { LiveSync } from './types'

/** Until the collab server is attached (the demo seed runs before it), nothing is live yet. */
const NO_LIVE: LiveSync = {
  markerChanged: async () => {},
  markerRemoved: async () => {},
  instanceChanged: async () => {},
  instanceRemoved: async () => {},
  objectChanged: async () => {},
  objectRemoved: async () => {},
  trimChanged: async () => {},
  trimRemoved: async () => {},
  checkStored: async () => {},
  passEnded: () => {},
  membershipChanged: () => {},
  sessionEnded: () => {},
  userSignedOut: () => {},
  projectDeleted: () => {},
  sceneDeleted: () => {},
}
import { requeueStaleScans } from './repositories/scans'
import { ObjectStore } from './storage/objects'
import { sweepIdleUploads } from './services/uploads'
import type { Services } from './types'

/**
 * loadConfig refuses these already; this guards a Config built by hand (tests, scripts) the same way: the
 * dev mailbox and the demo seeding never run in production nor on a listener others can reach.
 */
function refuseDevConveniences(config: Config): void {
  const on = [config.devMail && 'the dev mailbox (SPANMARK_DEV_MAILBOX)', config.seedDemo && 'the demo seeding (SPANMARK_DEMO)'].filter(Boolean).join(' and ')
  if (!on) return
  if (config.env === 'production') throw new Error(`${on} is refused with SPANMARK_ENV=production; unset it`)
  if (!isLoopbackHost(config.host)) throw new Error(`${on} needs a loopback listener (HOST 127.0.0.1, ::1 or localhost), not HOST=${config.host}`)
}

/**
 * Owns everything the process runs: the pool, the local fakes, the job queue and its worker process,
 * the mail sender and the HTTP server. Starts them in order and stops them in reverse.
 */
export class SpanmarkServer {
  private sweeper: NodeJS.Timeout | null = null
  private clusterSweeper: NodeJS.Timeout | null = null
  private uploadSweeper: NodeJS.Timeout | null = null

  private constructor(
    readonly services: Services,
    readonly config: Config,
    private readonly http: http.Server,
    private readonly fakes: { smtp: FakeSmtp | null; s3: FakeS3 | null },
    /** The ingest worker processes this server supervises (config.workers; none with WORKER=none). */
    readonly workers: WorkerSupervisor[],
    readonly url: string,
    /** What a worker process of this server runs with (the fakes' real addresses filled in). */
    readonly workerConfig: Config,
    /** The live documents' WebSocket endpoint. */
    readonly collab: CollabServer,
    /** Mails markers' authors what others commented (server/mail/commentNotices.ts). */
    readonly commentNotices: CommentNoticeSender,
    /** This server's hold on the compute threads (server/compute/pool.ts): heavy marker checks run there. */
    private readonly compute: { close(): Promise<void> },
    /** This process's id and beat among the others on the database (server/jobs/leases.ts). */
    readonly lease: ProcessLease,
  ) {}

  /** The first ingest worker (tests that kill one). */
  get worker(): WorkerSupervisor | null {
    return this.workers[0] ?? null
  }

  static async start(config: Config, log: pino.Logger): Promise<SpanmarkServer> {
    refuseDevConveniences(config)
    const pool = createPool(config.databaseUrl)
    const db = createDb(pool)
    const started: { close(): Promise<void> | void }[] = [{ close: () => db.destroy() }]
    try {
      await migrateToLatest(db)
      const lease = new ProcessLease(db, log, config.cluster)
      await lease.start()
      started.push({ close: () => lease.stop() })
      let mailPort = config.mail.port
      let smtp: FakeSmtp | null = null
      if (config.mail.fake) {
        smtp = await startFakeSmtp(db, { host: '127.0.0.1', port: config.mail.port, log })
        started.push(smtp)
        mailPort = smtp.port
      }
      let s3: FakeS3 | null = null
      let storage = config.storage
      if (storage.fake) {
        s3 = await startFakeS3({ port: storage.fakePort, directory: path.join(config.dataDir, 's3'), bucket: storage.bucket })
        started.push(s3)
        storage = { ...storage, endpoint: s3.endpoint }
      }
      const objects = new ObjectStore(storage)
      await objects.ensureBucket()
      await objects.resolvePartOrigin()
      const boss: PgBoss = await startBoss(config.databaseUrl, (err) => log.warn({ err }, 'job queue error'))
      started.push({ close: () => boss.stop({ graceful: false, wait: true }) })

      let origin = config.publicUrl ?? ''
      const compute = openComputePool(config.compute)
      started.push(compute)
      const scanIndexes = new ScanIndexRegistry(db, { cacheBytes: config.limits.nearestCacheBytes })
      const services: Services = {
        config,
        db,
        auth: createLucia(pool, config.secureCookies),
        hasher: createPasswordHasher(config.argon2),
        mailer: new Mailer(db, { host: config.mail.host, port: mailPort }, config.mail.from, log),
        objects,
        boss,
        scanIndexes,
        markerChecks: new MarkerChecker(
          db,
          scanIndexes,
          log,
          { checkPoints: config.limits.checkPoints, queuedPerProject: config.limits.checksQueuedPerProject },
          { owner: lease.id, leaseMs: config.cluster.leaseMs, testDelayMs: config.testCheckDelayMs },
        ),
        registrationJobs: new RegistrationJobs(log),
        live: NO_LIVE,
        log,
        processId: lease.id,
        publicOrigin: () => origin,
      }
      // The worker process gets the resolved addresses of the fakes, not the configured ports.
      const workerConfig: Config = { ...config, storage: { ...storage, fake: false }, mail: { ...config.mail, port: mailPort, fake: false } }
      const workers = config.worker === 'spawn' ? Array.from({ length: config.workers }, () => new WorkerSupervisor(workerConfig, log)) : []
      for (const worker of workers) {
        worker.start()
        started.push({ close: () => worker.stop() })
      }

      const seeded = config.seedDemo && (await seedDemo(services))
      const server = http.createServer(createApp(services))
      const collab = new CollabServer(services, () => [services.publicOrigin()])
      await collab.listen()
      started.push({ close: () => collab.fanout.stop() })
      collab.attach(server)
      services.live = collab.sync
      services.markerChecks.onStored = (sceneId, markerId) => collab.sync.checkStored(sceneId, markerId)
      await new Promise<void>((resolve, reject) => {
        server.once('error', reject)
        server.listen(config.port, config.host, () => resolve())
      })
      const { port } = server.address() as AddressInfo
      const url = `http://${config.host.includes(':') ? `[${config.host}]` : config.host}:${port}`
      origin ||= url
      if (seeded) await seedDemoGuest(services)
      services.mailer.start()
      const commentNotices = new CommentNoticeSender(db, services.mailer, { ...config.commentMail, origin: () => services.publicOrigin() }, log)
      commentNotices.start()
      const app = new SpanmarkServer(services, config, server, { smtp, s3 }, workers, url, workerConfig, collab, commentNotices, compute, lease)
      app.startSweeper()
      await app.sweepCluster()
      app.startClusterSweeper()
      return app
    } catch (err) {
      for (const s of started.reverse()) await Promise.resolve(s.close()).catch(() => {})
      throw err
    }
  }

  /**
   * Queues again the scans whose worker died (no heartbeat) or that no worker ever took; fails those out of
   * attempts. A stale scan held by this server's own worker, still alive, means that worker stalled: it is
   * killed, so the supervisor starts a fresh one and the queue moves on.
   */
  private startSweeper(): void {
    const { db, boss, log } = this.services
    const sweep = async () => {
      const { failed, queued } = await requeueStaleScans(db, this.config.ingestStaleMs, this.config.limits.ingestAttempts)
      for (const { id } of failed) log.warn({ scanId: id, attempts: this.config.limits.ingestAttempts }, 'scan processing stalled on its last attempt; failed')
      for (const { id } of queued) {
        log.warn({ scanId: id }, 'scan processing stalled; queued again')
        await sendIngest(boss, id)
      }
      for (const { id } of await failStaleExports(db, this.config.ingestStaleMs)) log.warn({ exportId: id }, 'export stalled (its worker stopped); failed')
      // Rate-limit windows that have ended (shared by every process; any of them may sweep).
      await sweepRateLimits(db)
      for (const worker of this.workers) {
        const mine = worker.claimName
        if (mine && [...failed, ...queued].some((s) => s.claimed_by === mine)) {
          log.warn({ worker: mine }, 'an ingest worker holds a stalled scan; starting a fresh one')
          worker.restart()
        }
      }
    }
    void sweep().catch((err) => log.warn({ err }, 'stale scan sweep failed'))
    this.sweeper = setInterval(() => void sweep().catch((err) => log.warn({ err }, 'stale scan sweep failed')), Math.max(500, this.config.ingestStaleMs / 2))
    this.sweeper.unref()
    // Resumable uploads left idle (a closed tab that never came back) are given up.
    const sweepUploads = () =>
      void sweepIdleUploads(this.services)
        .then((n) => n && log.info({ uploads: n }, 'idle uploads abandoned'))
        .catch((err) => log.warn({ err }, 'idle upload sweep failed'))
    this.uploadSweeper = setInterval(sweepUploads, this.config.uploads.resumable.sweepMs)
    this.uploadSweeper.unref()
  }

  /**
   * What no single process owns, done by whichever process comes first (each step is one conditional
   * update, so two processes sweeping at once do each piece once): a process that stopped beating is removed
   * and the documents loaded here are reconciled with PostgreSQL, refinements whose process died are failed,
   * and pending marker checks whose holder died (or that nobody took) are taken over and checked here.
   */
  async sweepCluster(): Promise<void> {
    const { log } = this.services
    const reaped = await this.lease.reap()
    if (reaped.length) {
      // What a dead process stored in a document but had not mirrored into PostgreSQL (or the reverse, or a
      // stored check it had not written into the record) is brought in line in the documents loaded here.
      log.warn({ processes: reaped }, 'server processes stopped beating; their documents are brought in line with the database')
      await this.collab.reconcileLoaded()
    }
    const orphaned = await failOrphanedRefinements(this.services)
    if (orphaned) log.info({ registrations: orphaned }, 'refinements left running by a server that stopped marked failed')
    const taken = await this.services.markerChecks.sweep(this.config.cluster.leaseMs)
    if (taken) log.info({ markers: taken }, 'checking markers left pending by a server that stopped (or by nobody)')
  }

  private startClusterSweeper(): void {
    this.clusterSweeper = setInterval(() => void this.sweepCluster().catch((err: unknown) => this.services.log.warn({ err }, 'the sweep for orphaned work failed; tried again')), this.config.cluster.sweepMs)
    this.clusterSweeper.unref()
  }

  async stop(): Promise<void> {
    if (this.sweeper) clearInterval(this.sweeper)
    if (this.clusterSweeper) clearInterval(this.clusterSweeper)
    if (this.uploadSweeper) clearInterval(this.uploadSweeper)
    await this.collab.close()
    await new Promise<void>((resolve) => {
      this.http.close(() => resolve())
      // Keep-alive connections would hold close() open; idle ones go now, busy ones after 5 s.
      this.http.closeIdleConnections()
      setTimeout(() => this.http.closeAllConnections(), 5000).unref()
    })
    await Promise.all(this.workers.map((w) => w.stop()))
    await this.services.registrationJobs.stop()
    this.services.markerChecks.stop()
    await this.services.markerChecks.idle()
    // Its row goes: whatever it still held (checks waiting for a scan) is free for the others at once.
    await this.lease.stop()
    // After the checks: none is left waiting on a thread that is gone.
    await this.compute.close()
    await this.commentNotices.stop()
    await this.services.mailer.stop()
    await this.services.boss.stop({ graceful: false, wait: true }).catch(() => {})
    this.services.objects.destroy()
    await this.fakes.s3?.close()
    await this.fakes.smtp?.close()
    // Destroying Kysely ends the pg pool it wraps.
    await this.services.db.destroy()
  }
}
