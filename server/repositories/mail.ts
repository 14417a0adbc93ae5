import { sql } from 'kysely'
import type { Conn } from '../db'

export interface OutgoingMail {
  to: string
  subject: string
  text: string
  html?: string
}

export function insertOutboxMail(db: Conn, mail: OutgoingMail) {
  return db
    .insertInto('mail_outbox')
    .values({ to_address: mail.to, subject: mail.subject, text_body: mail.text, html_body: mail.html ?? null })
    .returning('id')
    .executeTakeFirstOrThrow()
}

/**
 * Claims up to `limit` due messages by pushing their next attempt two minutes out: a sender that dies
 * mid-send leaves them to be retried then, and two senders never take the same message.
 */
export function claimDueMail(db: Conn, limit: number) {
  return db
    .updateTable('mail_outbox')
    .set({ next_attempt_at: sql`now() + interval '2 minutes'` })
    .where('id', 'in', (eb) =>
      eb
        .selectFrom('mail_outbox')
        .select('id')
        .where('sent_at', 'is', null)
        .where('next_attempt_at', '<=', sql<Date>`now()`)
        .orderBy('created_at')
        .limit(limit)
        .forUpdate()
        .skipLocked(),
    )
    .returningAll()
    .execute()
}

/** A sent message keeps its address and subject; its bodies go, since they may hold one-time links (invitations, passes, resets). */
export function markMailSent(db: Conn, id: string) {
  return db.updateTable('mail_outbox').set({ sent_at: new Date(), last_error: null, text_body: '', html_body: null }).where('id', '=', id).execute()
}

/** Backs off 10 s, 20 s, 40 s ... up to an hour. */
export function markMailFailed(db: Conn, id: string, attempts: number, error: string) {
  const delaySeconds = Math.min(3600, 10 * 2 ** attempts)
  return db
    .updateTable('mail_outbox')
    .set({
      attempts: attempts + 1,
      last_error: error.slice(0, 500),
      next_attempt_at: sql`now() + make_interval(secs => ${delaySeconds})`,
    })
    .where('id', '=', id)
    .execute()
}

export function insertDevMail(db: Conn, m: { from: string; to: string[]; subject: string; text: string; html: string | null }) {
  return db.insertInto('dev_mail').values({ from_address: m.from, to_addresses: m.to, subject: m.subject, text_body: m.text, html_body: m.html }).execute()
}

export function listDevMail(db: Conn, limit = 200) {
  return db.selectFrom('dev_mail').selectAll().orderBy('received_at', 'desc').orderBy('id').limit(limit).execute()
}

export function clearDevMail(db: Conn) {
  return db.deleteFrom('dev_mail').execute()
}
