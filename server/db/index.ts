import { Kysely, PostgresDialect, type Transaction } from 'kysely'
import pg from 'pg'
import type { Database } from './schema'

export type Db = Kysely<Database>
export type Tx = Transaction<Database>
/** Repository functions take either the database or a transaction as their first argument. */
export type Conn = Db | Tx

export function createPool(connectionString: string): pg.Pool {
  const pool = new pg.Pool({ connectionString, max: 10 })
  // An idle client losing its connection must not crash the process; the pool replaces it.
  pool.on('error', () => {})
  // Nor one checked out between queries (a transaction's, a session's) when PostgreSQL restarts: it emits
  // 'error' with no listener of the pool's (node-postgres removes the idle listener on checkout); the
  // query in flight, or the next one, fails on its own and the client is discarded on release.
  pool.on('connect', (client) => client.on('error', () => {}))
  return pool
}

export function createDb(pool: pg.Pool): Db {
  return new Kysely<Database>({ dialect: new PostgresDialect({ pool }) })
}

/**
 * Is this error the database being away (refused, reset, terminated by a restart, starting up) rather than
 * a refusal of the statement? SQLSTATE classes 08 (connection exception) and 57P (operator intervention:
 * 57P01 admin shutdown, 57P02 crash shutdown, 57P03 cannot connect now), per PostgreSQL's Appendix A.
 */
export function isConnectionLoss(err: unknown): boolean {
  const e = err as { code?: unknown; message?: unknown } | null
  const code = typeof e?.code === 'string' ? e.code : ''
  if (code.startsWith('08') || code.startsWith('57P')) return true
  if (['ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT'].includes(code)) return true
  const message = typeof e?.message === 'string' ? e.message : ''
  return /Connection terminated|connection is closed|Client has encountered a connection error|terminating connection/i.test(message)
}
