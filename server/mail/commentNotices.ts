import type pino from 'pino'
import type { Db } from '../db'
import { claimNotices, markNoticesMailed, recipientsDue } from '../repositories/comments'
import { insertOutboxMail } from '../repositories/mail'
import { findUserById } from '../repositories/users'
import type { Mailer } from './mailer'
import { commentDigestMail } from './templates'

/**
 * The job that tells markers' authors of others' comments. A comment leaves a notice (comment_notices); every
 * `sweepMs` this job takes each person whose oldest waiting notice is at least `gapMs` old, and in one
 * transaction writes one message gathering all their waiting notices into mail_outbox and marks them mailed.
 * The outbox delivers it (and retries through an SMTP outage), so nothing is lost between the two; a notice
 * for a project the person has left is dropped unsent.
 */
export class CommentNoticeSender {
  private timer: NodeJS.Timeout | null = null
  private running: Promise<void> | null = null

  constructor(
    private readonly db: Db,
    private readonly mailer: Mailer,
    private readonly options: { gapMs: number; sweepMs: number; origin: () => string },
    private readonly log: pino.Logger,
  ) {}

  start(): void {
    this.timer = setInterval(() => void this.sweep(), this.options.sweepMs)
    this.timer.unref()
  }

  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer)
    this.timer = null
    await this.running
  }

  /** One pass; a call while one runs waits for it rather than starting a second. */
  sweep(): Promise<void> {
    this.running ??= this.sendDue()
      .catch((err) => this.log.warn({ err }, 'comment notice sweep failed'))
      .finally(() => {
        this.running = null
      })
    return this.running
  }

  private async sendDue(): Promise<void> {
    let wrote = 0
    for (const { recipient_id } of await recipientsDue(this.db, this.options.gapMs)) {
      if (await this.gather(recipient_id)) wrote++
    }
    if (wrote > 0) await this.mailer.flush()
  }

  private gather(recipientId: string): Promise<boolean> {
    return this.db.transaction().execute(async (tx) => {
      const rows = await claimNotices(tx, recipientId)
      if (rows.length === 0) return false
      const user = await findUserById(tx, recipientId)
      const readable = rows.filter((r) => r.member_role !== null)
      if (user && readable.length > 0) {
        const items = readable.map((r) => ({
          authorName: r.author_name,
          body: r.body,
          at: r.created_at,
          reply: r.thread_id !== null,
          marker: { id: r.marker_id, label: r.marker_label },
          scene: { id: r.scene_id, name: r.scene_name },
          project: { id: r.project_id, name: r.project_name },
        }))
        await insertOutboxMail(tx, commentDigestMail(user.email, user.name, items, this.options.origin()))
      }
      await markNoticesMailed(tx, rows.map((r) => r.id))
      return user !== undefined && readable.length > 0
    })
  }
}
