import nodemailer, { type Transporter } from 'nodemailer'
import type pino from 'pino'
import type { Conn, Db } from '../db'
import { claimDueMail, insertOutboxMail, markMailFailed, markMailSent, type OutgoingMail } from '../repositories/mail'

/**
 * Outgoing mail goes through the mail_outbox table: `enqueue` writes the message (inside the caller's
 * transaction when given one) and a sender delivers due messages over SMTP, retrying with back-off, so an
 * SMTP outage delays mail and loses none.
 */
export class Mailer {
  private readonly transport: Transporter
  private timer: NodeJS.Timeout | null = null
  private running: Promise<void> | null = null
  private again = false

  constructor(
    private readonly db: Db,
    smtp: { host: string; port: number },
    private readonly from: string,
    private readonly log: pino.Logger,
  ) {
    this.transport = nodemailer.createTransport({ host: smtp.host, port: smtp.port, secure: false, ignoreTLS: true, connectionTimeout: 5000 })
  }

  async enqueue(conn: Conn, mail: OutgoingMail): Promise<void> {
    await insertOutboxMail(conn, mail)
    // A message written in a transaction is visible only after commit; the next sweep catches it then.
    setImmediate(() => void this.flush())
  }

  /** Sends everything due; concurrent calls coalesce into one more pass. */
  flush(): Promise<void> {
    if (this.running) {
      this.again = true
      return this.running
    }
    this.running = (async () => {
      do {
        this.again = false
        await this.sendDue()
      } while (this.again)
    })()
      .catch((err) => this.log.warn({ err }, 'mail sweep failed'))
      .finally(() => {
        this.running = null
      })
    return this.running
  }

  private async sendDue(): Promise<void> {
    for (;;) {
      const batch = await claimDueMail(this.db, 20)
      if (batch.length === 0) return
      for (const m of batch) {
        try {
          await this.transport.sendMail({ from: this.from, to: m.to_address, subject: m.subject, text: m.text_body, html: m.html_body ?? undefined })
          await markMailSent(this.db, m.id)
        } catch (err) {
          this.log.warn({ err, to: m.to_address }, 'mail not sent; will retry')
          await markMailFailed(this.db, m.id, m.attempts, err instanceof Error ? err.message : String(err))
        }
      }
    }
  }

  start(intervalMs = 5000): void {
    this.timer = setInterval(() => void this.flush(), intervalMs)
    this.timer.unref()
    void this.flush()
  }

  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer)
    this.timer = null
    await this.running
    this.transport.close()
  }
}
