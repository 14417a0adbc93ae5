import crypto from 'node:crypto'
import { sql, type Expression, type SqlBool } from 'kysely'
import type pino from 'pino'
import type { Db } from '../db'

/**
 * This server process's place among the others on one PostgreSQL. It has a random id per start and beats
 * in `server_processes` every `beatMs`; a process whose last beat is older than `leaseMs` (killed, hung,
 * cut off from the database) is dead, and the work it held (pending marker checks, running refinements) is
 * free for any other process to take. A clean stop deletes the row, so its work frees at once.
 *
 * A lease is a column naming the holder's id on the row of the work (markers.check_owner,
 * registrations.refine_owner): taking it is one conditional UPDATE (free, or held by a dead process), and
 * every write of the work's result is conditional on still holding it, so a process that lost its lease
 * (it stalled past the lease and another took over) has its late result discarded.
 */
export class ProcessLease {
  readonly id = crypto.randomUUID()
  private timer: NodeJS.Timeout | null = null
  private stopped = false

  constructor(
    private readonly db: Db,
    private readonly log: pino.Logger,
    readonly timing: LeaseTiming,
  ) {}

  async start(): Promise<void> {
    await this.db.insertInto('server_processes').values({ id: this.id }).execute()
    this.timer = setInterval(() => void this.beat(), this.timing.beatMs)
    this.timer.unref()
  }

  /** One beat; a database that does not answer is logged, and the next beat tries again. */
  async beat(): Promise<void> {
    if (this.stopped) return
    try {
      // Upsert: a row removed meanwhile (a sweep of long-dead rows after an outage) comes back.
      await this.db
        .insertInto('server_processes')
        .values({ id: this.id })
        .onConflict((oc) => oc.column('id').doUpdateSet({ beat_at: sql`now()` }))
        .execute()
    } catch (err) {
      this.log.warn({ err }, 'the process beat could not be written; tried again')
    }
  }

  /**
   * Deletes the rows of processes silent for longer than the lease (a killed process never deletes its own)
   * and returns their ids: the one sweeper that deleted a row is the one that cleans up after that process
   * (runtime.ts). A process that was only cut off for a while puts its row back with its next beat.
   */
  async reap(): Promise<string[]> {
    const rows = await this.db
      .deleteFrom('server_processes')
      .where('id', '<>', this.id)
      .where('beat_at', '<', sql<Date>`now() - make_interval(secs => ${this.timing.leaseMs / 1000})`)
      .returning('id')
      .execute()
    return rows.map((r) => r.id)
  }

  async stop(): Promise<void> {
    this.stopped = true
    if (this.timer) clearInterval(this.timer)
    await this.db.deleteFrom('server_processes').where('id', '=', this.id).execute().catch(() => undefined)
  }
}

export interface LeaseTiming {
  /** How often each process beats. */
  beatMs: number
  /** A process silent this long is dead: its work is taken over. */
  leaseMs: number
  /** How often each process looks for work without a live holder. */
  sweepMs: number
}

/** Is the process named by `owner` (a column) alive? (null owner: no) */
export function holderAlive(owner: Expression<string | null>, leaseMs: number): Expression<SqlBool> {
  return sql<SqlBool>`exists (select 1 from server_processes p where p.id = ${owner} and p.beat_at > now() - make_interval(secs => ${leaseMs / 1000}))`
}
