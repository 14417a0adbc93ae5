import http from 'node:http'
import type { AddressInfo } from 'node:net'
import type pino from 'pino'
import { createLucia } from './auth/lucia'
import { createPasswordHasher } from './auth/password'
import { createApp } from './app'
import type { Config } from './config'
import { createDb, createPool } from './db'
import { migrateToLatest } from './db/migrate'
import { seedDemo } from './demo/seed'
import { startFakeSmtp, type FakeSmtp } from './fakes/smtp'
import { Mailer } from './mail/mailer'
import type { Services } from './types'

/**
 * Owns everything the process runs: the pool, the local fakes, the mail sender and the HTTP server.
 * Starts them in order and stops them in reverse, so nothing is left half open.
 */
export class SpanmarkServer {
  private constructor(
    readonly services: Services,
    private readonly http: http.Server,
    private readonly smtp: FakeSmtp | null,
    readonly url: string,
    readonly demoSeeded: boolean,
  ) {}

  static async start(config: Config, log: pino.Logger): Promise<SpanmarkServer> {
    const pool = createPool(config.databaseUrl)
    const db = createDb(pool)
    try {
      await migrateToLatest(db)
      let smtp: FakeSmtp | null = null
      let mailPort = config.mail.port
      if (config.mail.fake) {
        smtp = await startFakeSmtp(db, { host: '127.0.0.1', port: config.mail.port, log })
        mailPort = smtp.port
      }
      let origin = config.publicUrl ?? ''
      const hasher = createPasswordHasher(config.argon2)
      const services: Services = {
        config,
        db,
        auth: createLucia(pool, config.secureCookies),
        hasher,
        mailer: new Mailer(db, { host: config.mail.host, port: mailPort }, config.mail.from, log),
        log,
        publicOrigin: () => origin,
      }
      const demoSeeded = config.seedDemo ? await seedDemo(services) : false
      const server = http.createServer(createApp(services))
      await new Promise<void>((resolve, reject) => {
        server.once('error', reject)
        server.listen(config.port, config.host, () => resolve())
      })
      const { port } = server.address() as AddressInfo
      const url = `http://${config.host.includes(':') ? `[${config.host}]` : config.host}:${port}`
      origin ||= url
      services.mailer.start()
      return new SpanmarkServer(services, server, smtp, url, demoSeeded)
    } catch (err) {
      await db.destroy().catch(() => {})
      throw err
    }
  }

  async stop(): Promise<void> {
    await new Promise<void>((resolve) => {
      this.http.close(() => resolve())
      // Keep-alive connections would hold close() open; idle ones go now, busy ones after 5 s.
      this.http.closeIdleConnections()
      setTimeout(() => this.http.closeAllConnections(), 5000).unref()
    })
    await this.services.mailer.stop()
    await this.smtp?.close()
    // Destroying Kysely ends the pg pool it wraps.
    await this.services.db.destroy()
  }
}
