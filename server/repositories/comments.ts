import { sql } from 'kysely'
import type { Conn } from '../db'

const commentRows = (db: Conn) =>
  db
    .selectFrom('comments as c')
    .leftJoin('users as a', 'a.id', 'c.author_id')
    .leftJoin('users as r', 'r.id', 'c.resolved_by')
    .selectAll('c')
    .select(['a.name as author_name', 'r.name as resolved_by_name'])

export type CommentRow = NonNullable<Awaited<ReturnType<typeof findComment>>>

/**
 * A page of a marker's threads: the `limit` latest started before thread `before` (all when absent), each with
 * all its replies (a thread holds at most THREAD_REPLIES_MAX), oldest first; `earlier` is the thread id to ask
 * before for the page before it. The service puts rows into threads.
 */
export async function listThreadsPage(db: Conn, markerId: string, page: { limit: number; before?: string }) {
  let firsts = commentRows(db).where('c.marker_id', '=', markerId).where('c.thread_id', 'is', null)
  if (page.before !== undefined) {
    const cursor = await db.selectFrom('comments').select(['created_at', 'id']).where('id', '=', page.before).where('marker_id', '=', markerId).where('thread_id', 'is', null).executeTakeFirst()
    if (!cursor) return null
    firsts = firsts.where((eb) => eb(eb.refTuple('c.created_at', 'c.id'), '<', eb.tuple(cursor.created_at, cursor.id)))
  }
  const newest = await firsts.orderBy('c.created_at', 'desc').orderBy('c.id', 'desc').limit(page.limit + 1).execute()
  const more = newest.length > page.limit
  const threads = newest.slice(0, page.limit).reverse()
  const replies = threads.length
    ? await commentRows(db).where('c.thread_id', 'in', threads.map((t) => t.id)).orderBy('c.created_at').orderBy('c.id').execute()
    : []
  return { rows: [...threads, ...replies], earlier: more ? threads[0]!.id : null }
}

export async function countReplies(db: Conn, threadId: string): Promise<number> {
  const row = await db.selectFrom('comments').select((eb) => eb.fn.countAll<string>().as('n')).where('thread_id', '=', threadId).executeTakeFirstOrThrow()
  return Number(row.n)
}

/** One thread: its first comment and the replies, oldest first. */
export function listThread(db: Conn, threadId: string) {
  return commentRows(db)
    .where((eb) => eb.or([eb('c.id', '=', threadId), eb('c.thread_id', '=', threadId)]))
    .orderBy(sql`c.thread_id is not null`)
    .orderBy('c.created_at')
    .orderBy('c.id')
    .execute()
}

export function findComment(db: Conn, commentId: string) {
  return commentRows(db).where('c.id', '=', commentId).executeTakeFirst()
}

export function projectOfComment(db: Conn, commentId: string) {
  return db.selectFrom('comments as c').innerJoin('scenes as s', 's.id', 'c.scene_id').select('s.project_id').where('c.id', '=', commentId).executeTakeFirst()
}

export function insertComment(db: Conn, v: { markerId: string; sceneId: string; threadId: string | null; authorId: string | null; body: string }) {
  return db
    .insertInto('comments')
    .values({ marker_id: v.markerId, scene_id: v.sceneId, thread_id: v.threadId, author_id: v.authorId, body: v.body })
    .returning(['id', 'created_at'])
    .executeTakeFirstOrThrow()
}

/** Resolves (userId given) or reopens (null) a thread; only first comments carry a resolution. */
export function setThreadResolved(db: Conn, threadId: string, userId: string | null, resolved: boolean) {
  return db
    .updateTable('comments')
    .set(resolved ? { resolved_at: new Date(), resolved_by: userId } : { resolved_at: null, resolved_by: null })
    .where('id', '=', threadId)
    .where('thread_id', 'is', null)
    .where('resolved_at', resolved ? 'is' : 'is not', null)
    .returning('id')
    .executeTakeFirst()
}

// ---- notices: a marker's author told of others' comments, by e-mail, gathered per gap ----

export function insertNotice(db: Conn, commentId: string, recipientId: string) {
  return db.insertInto('comment_notices').values({ comment_id: commentId, recipient_id: recipientId }).execute()
}

/**
 * People with notices waiting whose oldest waiting notice is at least `gapMs` old: their message gathers
 * everything that arrived since it came. A notice arriving after a message waits a full gap again, so each
 * person gets at most one message per gap.
 */
export function recipientsDue(db: Conn, gapMs: number) {
  return db
    .selectFrom('comment_notices')
    .select('recipient_id')
    .where('mailed_at', 'is', null)
    .groupBy('recipient_id')
    .having((eb) => eb.fn.min('created_at'), '<=', sql<Date>`now() - make_interval(secs => ${gapMs / 1000})`)
    .execute()
}

/**
 * A person's waiting notices with what the message says about each (the comment, its author, the marker, its
 * scene and project, and whether the person is still a member there), locked for this transaction: a second
 * sender skips them.
 */
export function claimNotices(db: Conn, recipientId: string) {
  return db
    .selectFrom('comment_notices as n')
    .innerJoin('comments as c', 'c.id', 'n.comment_id')
    .innerJoin('markers as m', 'm.id', 'c.marker_id')
    .innerJoin('scenes as s', 's.id', 'c.scene_id')
    .innerJoin('projects as p', 'p.id', 's.project_id')
    .leftJoin('users as a', 'a.id', 'c.author_id')
    .leftJoin('memberships as ms', (j) => j.onRef('ms.project_id', '=', 'p.id').on('ms.user_id', '=', recipientId))
    .select([
      'n.id',
      'c.id as comment_id',
      'c.body',
      'c.created_at',
      'c.thread_id',
      'a.name as author_name',
      'm.id as marker_id',
      'm.label as marker_label',
      'm.kind as marker_kind',
      's.id as scene_id',
      's.name as scene_name',
      'p.id as project_id',
      'p.name as project_name',
      'ms.role as member_role',
    ])
    .where('n.recipient_id', '=', recipientId)
    .where('n.mailed_at', 'is', null)
    .orderBy('c.created_at')
    .orderBy('n.id')
    .forUpdate('n')
    .skipLocked()
    .execute()
}

export function markNoticesMailed(db: Conn, ids: readonly string[]) {
  if (ids.length === 0) return Promise.resolve()
  return db.updateTable('comment_notices').set({ mailed_at: new Date() }).where('id', 'in', [...ids]).execute()
}
