import crypto from 'node:crypto'
import pg from 'pg'
import type pino from 'pino'
import { sql } from 'kysely'
import type { DocumentKind } from '@shared/collab/documents'
import type { Db } from '../db'
import { LIVE_CHANNEL } from '../repositories/sceneUpdates'

/** Revocations (collab/connections.ts events) made in one process, for every other process's sockets. */
export const REVOKE_CHANNEL = 'spanmark_revoke'
/** Presence (awareness) updates of one process's connections, for the others. */
export const PRESENCE_CHANNEL = 'spanmark_presence'

export type Revocation =
  | { event: 'membershipChanged'; projectId: string; userId: string; role: string | null }
  | { event: 'sessionEnded'; sessionHash: string }
  | { event: 'userSignedOut'; userId: string; reason: string }
  | { event: 'projectDeleted'; projectId: string }
  | { event: 'sceneDeleted'; sceneId: string }
  | { event: 'passEnded'; passId: string }

export interface FanoutHandlers {
  /** Another process stored update `seq` of a document. */
  update(sceneId: string, doc: DocumentKind, seq: string): void
  revocation(r: Revocation): void
  presence(sceneId: string, doc: DocumentKind, update: Uint8Array): void
  /** The listening connection came back after a loss: anything may have been missed. */
  reconnected(): void
}

/**
 * Live documents across processes, through PostgreSQL's LISTEN/NOTIFY (every update is stored before it is
 * announced, and NOTIFY is delivered at commit, so a notice carries only where to read: scene, document and
 * position; revocations and presence carry their few bytes, well under NOTIFY's 8000-byte payload limit).
 * One dedicated connection listens; when it is lost (PostgreSQL restarted, a network fault) it is opened
 * again with a growing pause (0.25 s doubling to 5 s) and `reconnected` lets every loaded document catch up
 * by position, so nothing announced meanwhile is missed. A process ignores its own revocations and presence
 * (it has applied them already); its own updates are skipped by position (room.ts).
 */
export class LiveFanout {
  readonly processId = crypto.randomUUID()
  private client: pg.Client | null = null
  private stopped = false
  private retries = 0
  private timer: NodeJS.Timeout | null = null

  constructor(
    private readonly databaseUrl: string,
    private readonly db: Db,
    private readonly log: pino.Logger,
    private readonly handlers: FanoutHandlers,
  ) {}

  async start(): Promise<void> {
    await this.connect()
  }

  private async connect(): Promise<void> {
    const client = new pg.Client({ connectionString: this.databaseUrl })
    client.on('notification', (n) => this.receive(n.channel, n.payload ?? ''))
    client.on('error', (err) => this.log.warn({ err }, 'the live fan-out connection failed'))
    client.on('end', () => {
      if (this.client !== client) return
      this.client = null
      this.reconnectLater()
    })
    await client.connect()
    await client.query(`LISTEN ${LIVE_CHANNEL}; LISTEN ${REVOKE_CHANNEL}; LISTEN ${PRESENCE_CHANNEL}`)
    if (this.stopped) return void (await client.end().catch(() => undefined))
    this.client = client
  }

  private reconnectLater(): void {
    if (this.stopped || this.timer) return
    const delay = Math.min(5000, 250 * 2 ** this.retries++)
    this.timer = setTimeout(() => {
      this.timer = null
      this.connect().then(
        () => {
          this.retries = 0
          this.log.info('the live fan-out connection is back; documents catch up')
          this.handlers.reconnected()
        },
        (err: unknown) => {
          this.log.warn({ err, retryInMs: Math.min(5000, 250 * 2 ** this.retries) }, 'the live fan-out connection could not be opened')
          this.reconnectLater()
        },
      )
    }, delay)
    this.timer.unref()
  }

  private receive(channel: string, payload: string): void {
    try {
      if (channel === LIVE_CHANNEL) {
        const [sceneId, doc, seq] = payload.split(' ')
        if (sceneId && (doc === 'work' || doc === 'record') && seq) this.handlers.update(sceneId, doc, seq)
      } else if (channel === REVOKE_CHANNEL) {
        const message = JSON.parse(payload) as { from: string; revocation: Revocation }
        if (message.from !== this.processId) this.handlers.revocation(message.revocation)
      } else if (channel === PRESENCE_CHANNEL) {
        const [from, sceneId, doc, data] = payload.split(' ')
        if (from !== this.processId && sceneId && (doc === 'work' || doc === 'record') && data) this.handlers.presence(sceneId, doc, Buffer.from(data, 'base64'))
      }
    } catch (err) {
      this.log.warn({ err, channel }, 'a live fan-out notice could not be read')
    }
  }

  /** Tells every other process (through the shared pool; delivered at once, not tied to a transaction). */
  async revoke(revocation: Revocation): Promise<void> {
    await sql`select pg_notify(${REVOKE_CHANNEL}, ${JSON.stringify({ from: this.processId, revocation })})`.execute(this.db)
  }

  async presence(sceneId: string, doc: DocumentKind, update: Uint8Array): Promise<void> {
    await sql`select pg_notify(${PRESENCE_CHANNEL}, ${`${this.processId} ${sceneId} ${doc} ${Buffer.from(update).toString('base64')}`})`.execute(this.db)
  }

  /** Tests: drop the listening connection as a PostgreSQL restart would. */
  async dropConnection(): Promise<void> {
    const client = this.client
    if (!client) return
    await client.end().catch(() => undefined)
  }

  async stop(): Promise<void> {
    this.stopped = true
    if (this.timer) clearTimeout(this.timer)
    const client = this.client
    this.client = null
    await client?.end().catch(() => undefined)
  }
}
