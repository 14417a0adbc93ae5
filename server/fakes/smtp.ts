import type { AddressInfo } from 'node:net'
import { simpleParser, type AddressObject } from 'mailparser'
import { SMTPServer } from 'smtp-server'
import type pino from 'pino'
import type { Db } from '../db'
import { insertDevMail } from '../repositories/mail'

/**
 * The local stand-in for a hosted mail service (development and tests): a real SMTP server on loopback
 * that parses each message and keeps it in dev_mail, where the dev mailbox page shows it.
 */
export interface FakeSmtp {
  port: number
  close(): Promise<void>
}

function addresses(a: AddressObject | AddressObject[] | undefined): string[] {
  if (!a) return []
  return (Array.isArray(a) ? a : [a]).flatMap((o) => o.value.map((v) => v.address ?? '')).filter(Boolean)
}

export function startFakeSmtp(db: Db, opts: { host: string; port: number; log: pino.Logger }): Promise<FakeSmtp> {
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    size: 10 * 1024 * 1024,
    logger: false,
    onData(stream, _session, callback) {
      simpleParser(stream)
        .then((mail) =>
          insertDevMail(db, {
            from: addresses(mail.from)[0] ?? '',
            to: addresses(mail.to),
            subject: mail.subject ?? '',
            text: mail.text ?? '',
            html: typeof mail.html === 'string' ? mail.html : null,
          }),
        )
        .then(() => callback(), (err: Error) => {
          opts.log.error({ err }, 'fake SMTP could not store a message')
          callback(err)
        })
    },
  })
  return new Promise((resolve, reject) => {
    server.once('error', reject)
    server.listen(opts.port, opts.host, () => {
      server.off('error', reject)
      server.on('error', (err) => opts.log.warn({ err }, 'fake SMTP error'))
      const port = (server.server.address() as AddressInfo).port
      resolve({ port, close: () => new Promise<void>((r) => server.close(() => r())) })
    })
  })
}
