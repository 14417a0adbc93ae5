// The process entry: reads the environment, starts Spanmark, stops it cleanly on SIGINT/SIGTERM.
import { loadConfig } from './config'
import { DEMO_ACCOUNTS, DEMO_GUEST, DEMO_PASSWORD } from './demo/accounts'
import { createLogger } from './logger'
import { SpanmarkServer } from './runtime'

const config = loadConfig()
const log = createLogger(config.logLevel, config.logFormat === 'pretty')

try {
  const server = await SpanmarkServer.start(config, log)
  const lines = [
    '',
    `  Spanmark is running at ${server.url}`,
    ...(config.devMail ? [`  Dev mailbox (every e-mail the server sends): ${server.url}/dev/mail`] : []),
    ...(config.seedDemo
      ? ['', `  Demo sign-ins (password for all: ${DEMO_PASSWORD}):`, ...DEMO_ACCOUNTS.map((a) => `    ${a.role.padEnd(9)} ${a.email.padEnd(28)} ${a.name}`),
          `    guest     ${DEMO_GUEST.email.padEnd(28)} ${DEMO_GUEST.name}: no account; a viewing pass for them is in the dev mailbox`]
      : []),
    '',
    '  Ctrl-C stops it.',
    '',
  ]
  process.stdout.write(lines.join('\n') + '\n')
  let stopping = false
  const stop = async (signal: string) => {
    if (stopping) return
    stopping = true
    log.info({ signal }, 'shutting down')
    const force = setTimeout(() => process.exit(1), 15_000)
    force.unref()
    await server.stop()
    process.exit(0)
  }
  process.on('SIGINT', () => void stop('SIGINT'))
  process.on('SIGTERM', () => void stop('SIGTERM'))
} catch (err) {
  log.fatal({ err }, 'Spanmark could not start')
  process.stderr.write(`Spanmark could not start: ${err instanceof Error ? err.message : String(err)}\n`)
  process.exit(1)
}
