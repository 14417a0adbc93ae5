import crypto from 'node:crypto'
import pg from 'pg'

const TEMPLATE_DB = 'spanmark_template'

export function adminUrl(): string {
  const url = process.env.TEST_DATABASE_ADMIN_URL
  if (!url) throw new Error('database tests need TEST_DATABASE_ADMIN_URL: run them through `npm test`, which starts a throwaway PostgreSQL')
  return url
}

/** A fresh, migrated database for one test file (a copy of `template`); drop() removes it. */
export async function createTestDatabase(template = TEMPLATE_DB): Promise<{ url: string; drop(): Promise<void> }> {
  const name = `t_${crypto.randomBytes(6).toString('hex')}`
  const client = new pg.Client({ connectionString: adminUrl() })
  await client.connect()
  await client.query(`CREATE DATABASE ${name} TEMPLATE ${template}`)
  await client.end()
  const url = new URL(adminUrl())
  url.pathname = `/${name}`
  return {
    url: url.toString(),
    async drop() {
      const c = new pg.Client({ connectionString: adminUrl() })
      await c.connect()
      await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`)
      await c.end()
    },
  }
}
