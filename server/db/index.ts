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
  return pool
}

export function createDb(pool: pg.Pool): Db {
  return new Kysely<Database>({ dialect: new PostgresDialect({ pool }) })
}
