// The ingest worker process: takes scan jobs from the PostgreSQL queue and processes them one at a time.
// Started by the server (jobs/supervisor.ts) with the server's configuration, or on its own with the
// same environment as the server (workers may run on other machines: several share the PostgreSQL job queue).
import { loadConfig, type Config } from './config'
import { createDb, createPool } from './db'
import { EXPORT_QUEUE, INGEST_QUEUE, sendIngest, startBoss, type ExportJob, type IngestJob } from './jobs/queue'
import { workerName } from './jobs/supervisor'
import { createLogger } from './logger'
import { runExport } from './points/export/runExport'
import { ingestScan } from './points/ingest'
import { ObjectStore } from './storage/objects'

const config: Config = process.env.SPANMARK_WORKER_CONFIG ? (JSON.parse(process.env.SPANMARK_WORKER_CONFIG) as Config) : loadConfig()
const log = createLogger(config.logLevel, config.logFormat === 'pretty').child({ worker: process.pid })
const db = createDb(createPool(config.databaseUrl))
const objects = new ObjectStore(config.storage)
const boss = await startBoss(config.databaseUrl, (err) => log.warn({ err }, 'job queue error'))

await boss.work<IngestJob>(INGEST_QUEUE, { batchSize: 1, pollingIntervalSeconds: 0.5 }, async (jobs) => {
  for (const job of jobs) {
    await ingestScan({ db, objects, log, lazLimitBytes: config.uploads.lazLimitBytes, staleMs: config.ingestStaleMs, maxAttempts: config.limits.ingestAttempts, workerPoints: config.limits.workerPoints, name: workerName(process.pid), enqueue: (id) => sendIngest(boss, id) }, job.data.scanId)
  }
})
// Exports read stored tiles and write to object storage; they run beside ingest, one at a time.
await boss.work<ExportJob>(EXPORT_QUEUE, { batchSize: 1, pollingIntervalSeconds: 0.5 }, async (jobs) => {
  for (const job of jobs) await runExport({ db, objects, log, progressEveryMs: config.exportProgressMs, staleMs: config.ingestStaleMs }, job.data.exportId)
})
log.info('ingest worker ready')

let stopping = false
async function stop() {
  if (stopping) return
  stopping = true
  await boss.stop({ graceful: true, timeout: 5000, wait: true }).catch(() => {})
  objects.destroy()
  await db.destroy()
  process.exit(0)
}
process.on('SIGTERM', () => void stop())
process.on('SIGINT', () => void stop())
// The server going away (its pipe closing) ends the worker too.
process.on('disconnect', () => void stop())
