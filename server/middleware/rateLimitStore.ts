import { sql } from 'kysely'
import type { ClientRateLimitInfo, Options, Store } from 'express-rate-limit'
import type { Db } from '../db'

/**
 * An express-rate-limit store in PostgreSQL (its `Store` interface), so every server process counts the same
 * hits: a fixed window per key, `rate_limit_hits`. One statement per hit: the first hit (or the first after
 * the window ended) starts a window of `windowMs` at 1; the others add one. `prefix` keeps each limiter's keys
 * apart. Expired rows are swept by `sweepRateLimits` (jobs).
 */
export class PostgresRateLimitStore implements Store {
  private windowMs = 60_000
  /** Counts are shared between processes (express-rate-limit's flag: not this instance's alone). */
  readonly localKeys = false

  constructor(
    private readonly db: Db,
    readonly prefix: string,
  ) {}

  init(options: Options): void {
    this.windowMs = options.windowMs
  }

  private key(key: string): string {
    return `${this.prefix}:${key}`
  }

  async get(key: string): Promise<ClientRateLimitInfo | undefined> {
    const row = await this.db.selectFrom('rate_limit_hits').select(['hits', 'reset_at']).where('key', '=', this.key(key)).where('reset_at', '>', new Date()).executeTakeFirst()
    return row ? { totalHits: row.hits, resetTime: row.reset_at } : undefined
  }

  async increment(key: string): Promise<ClientRateLimitInfo> {
    const window = sql`make_interval(secs => ${this.windowMs / 1000})`
    const { rows } = await sql<{ hits: number; reset_at: Date }>`
      insert into rate_limit_hits (key, hits, reset_at) values (${this.key(key)}, 1, now() + ${window})
      on conflict (key) do update set
        hits = case when rate_limit_hits.reset_at <= now() then 1 else rate_limit_hits.hits + 1 end,
        reset_at = case when rate_limit_hits.reset_at <= now() then now() + ${window} else rate_limit_hits.reset_at end
      returning hits, reset_at`.execute(this.db)
    return { totalHits: rows[0]!.hits, resetTime: rows[0]!.reset_at }
  }

  async decrement(key: string): Promise<void> {
    await this.db.updateTable('rate_limit_hits').set({ hits: sql`greatest(hits - 1, 0)` }).where('key', '=', this.key(key)).execute()
  }

  async resetKey(key: string): Promise<void> {
    await this.db.deleteFrom('rate_limit_hits').where('key', '=', this.key(key)).execute()
  }
}

/** Deletes the windows that have ended (they would be restarted anyway). */
export async function sweepRateLimits(db: Db): Promise<number> {
  const r = await db.deleteFrom('rate_limit_hits').where('reset_at', '<=', new Date()).executeTakeFirst()
  return Number(r.numDeletedRows)
}
