import PgBoss from 'pg-boss'

/** Job queues live in PostgreSQL (pg-boss), so queued work survives a restart. */
export const INGEST_QUEUE = 'scan-ingest'
/** Exports of scenes and placements (server/points/export/runExport.ts). */
export const EXPORT_QUEUE = 'scene-export'

export interface IngestJob {
  scanId: string
}

export interface ExportJob {
  exportId: string
}

export async function startBoss(databaseUrl: string, onError: (err: Error) => void): Promise<PgBoss> {
  const boss = new PgBoss({ connectionString: databaseUrl, max: 4, schema: 'pgboss' })
  boss.on('error', onError)
  await boss.start()
  // pg-boss 10: a queue must exist before send or work. A job whose worker was killed stays active until
  // it expires; Spanmark does not wait for that: scans carry a heartbeat and stale ones are re-queued.
  await boss.createQueue(INGEST_QUEUE, { name: INGEST_QUEUE, retryLimit: 2, retryDelay: 5, expireInSeconds: 3600 })
  await boss.createQueue(EXPORT_QUEUE, { name: EXPORT_QUEUE, retryLimit: 0, expireInSeconds: 6 * 3600 })
  return boss
}

export function sendIngest(boss: PgBoss, scanId: string): Promise<string | null> {
  return boss.send(INGEST_QUEUE, { scanId } satisfies IngestJob)
}

export function sendExport(boss: PgBoss, exportId: string): Promise<string | null> {
  return boss.send(EXPORT_QUEUE, { exportId } satisfies ExportJob)
}
