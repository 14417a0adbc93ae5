#!/usr/bin/env node
// `npm start`: everything from a fresh machine to a running Spanmark. Plain Node on purpose: it runs
// before node_modules exists. Installs what is missing, starts a private PostgreSQL cluster (kept between
// runs), builds the client and starts the server, which applies migrations, seeds the demo project into
// an empty database and starts the dev mailbox (both asked for by flags here, never by default). Ctrl-C stops what this script started.
import { ensureNodeModules, fail, localBin, log, run, startChild } from './lib/system.mjs'
import { chooseDataDir, ensurePostgresInstalled, startCluster, stopCluster } from './lib/postgres.mjs'

const dev = process.argv.includes('--dev')
/**
 * `--join`: one more server process beside a running `npm start` (its database, object storage, mail and
 * ingest worker), on SPANMARK_PORT: several processes share one PostgreSQL (README "Several processes").
 */
const join = process.argv.includes('--join')
/** `--built`: the production build (`npm run build`: client and compiled server), run with plain node, no TypeScript loader. */
const built = process.argv.includes('--built')

async function main() {
  ensureNodeModules()
  const bin = ensurePostgresInstalled()
  const { dataDir, fallback } = chooseDataDir()
  if (fallback) log(`the postgres user cannot reach this checkout, so the database lives in ${dataDir}`)
  const pgPort = Number(process.env.SPANMARK_PG_PORT ?? 54329)
  const cluster = await startCluster({ bin, dataDir, port: pgPort, database: 'spanmark' })
  log(`PostgreSQL on 127.0.0.1:${cluster.port}, data in ${dataDir}${cluster.started ? '' : ' (already running, reused)'}`)

  if (!dev && !join) {
    log('building the client (vite build)')
    run(localBin('vite'), ['build', '--logLevel', 'warn'])
  }
  if (built) {
    log('compiling the server (scripts/build-server.mjs)')
    run(process.execPath, ['scripts/build-server.mjs'])
  }

  const env = {
    ...process.env,
    SPANMARK_ENV: process.env.SPANMARK_ENV ?? 'development',
    DATABASE_URL: cluster.url,
    PORT: process.env.SPANMARK_PORT ?? process.env.PORT ?? '5480',
    HOST: process.env.HOST ?? '127.0.0.1',
    S3_FAKE: process.env.S3_FAKE ?? '1',
    // The development conveniences (dev mailbox, demo seeding): asked for here, never a server default.
    SPANMARK_DEV_MAILBOX: process.env.SPANMARK_DEV_MAILBOX ?? '1',
    SPANMARK_DEMO: process.env.SPANMARK_DEMO ?? '1',
    ...(join
      ? { S3_FAKE: '0', S3_ENDPOINT: process.env.S3_ENDPOINT ?? 'http://127.0.0.1:4569', SPANMARK_DEV_MAILBOX: '0', SPANMARK_DEMO: '0', WORKER: 'none' }
      : {}),
  }
  const server = built ? startChild(process.execPath, ['build/server/index.js'], { env }) : startChild(localBin('tsx'), ['server/index.ts'], { env })

  let stopping = false
  const stop = (signal) => {
    if (stopping) return
    stopping = true
    log(`stopping (${signal})`)
    server.kill('SIGTERM')
  }
  process.on('SIGINT', () => stop('SIGINT'))
  process.on('SIGTERM', () => stop('SIGTERM'))

  const code = await new Promise((resolve) => server.on('exit', (c, s) => resolve(c ?? (s ? 1 : 0))))
  if (cluster.started && !join) {
    log('stopping PostgreSQL')
    stopCluster({ bin, dataDir })
  }
  process.exit(stopping ? 0 : code)
}

main().catch((err) => fail(err instanceof Error ? err.message : String(err)))
