import { THREAD_REPLIES_MAX, type Comment, type CommentCreateBody, type CommentThread, type ThreadsPageQuery } from '@shared/schemas'
import { HttpError } from '../errors'
import * as repo from '../repositories/comments'
import { findMarker } from '../repositories/markers'
import type { Services } from '../types'

/**
 * Comments on markers, in threads (the first comment's id is the thread's). Every change is written into the
 * marker's record-document entry (its comments summary), so everyone in the scene sees it at once; a comment
 * by someone other than the marker's author leaves a notice that the notice job mails to the author.
 */

function toComment(row: repo.CommentRow): Comment {
  return {
    id: row.id,
    markerId: row.marker_id,
    threadId: row.thread_id,
    author: row.author_id && row.author_name ? { id: row.author_id, name: row.author_name } : null,
    body: row.body,
    createdAt: row.created_at.toISOString(),
  }
}

/** Rows (first comments and replies, oldest first) into threads, ordered by when each was started. */
function toThreads(rows: repo.CommentRow[]): CommentThread[] {
  const threads = new Map<string, CommentThread>()
  for (const row of rows) {
    if (row.thread_id !== null) continue
    threads.set(row.id, {
      id: row.id,
      markerId: row.marker_id,
      resolved: row.resolved_at ? { by: row.resolved_by && row.resolved_by_name ? { id: row.resolved_by, name: row.resolved_by_name } : null, at: row.resolved_at.toISOString() } : null,
      comments: [toComment(row)],
    })
  }
  for (const row of rows) if (row.thread_id !== null) threads.get(row.thread_id)?.comments.push(toComment(row))
  return [...threads.values()]
}

async function thread(s: Services, threadId: string): Promise<CommentThread> {
  const [t] = toThreads(await repo.listThread(s.db, threadId))
  if (!t) throw HttpError.notFound('No such comment thread.')
  return t
}

/** A page of a marker's threads, newest page first (ThreadsPageQuery). */
export async function threadsOf(s: Services, markerId: string, page: ThreadsPageQuery): Promise<{ threads: CommentThread[]; earlier: string | null }> {
  if (!(await findMarker(s.db, markerId))) throw HttpError.notFound('No such marker.')
  const found = await repo.listThreadsPage(s.db, markerId, page)
  if (!found) throw HttpError.badRequest('query.before: no comment thread with this id on this marker.', 'before')
  return { threads: toThreads(found.rows), earlier: found.earlier }
}

export async function addComment(s: Services, markerId: string, body: CommentCreateBody, userId: string | null): Promise<{ comment: Comment; thread: CommentThread }> {
  const marker = await findMarker(s.db, markerId)
  if (!marker) throw HttpError.notFound('No such marker.')
  let threadId: string | null = null
  if (body.threadId) {
    const first = await repo.findComment(s.db, body.threadId)
    if (!first || first.marker_id !== markerId) throw HttpError.badRequest('body.threadId: no comment thread with this id on this marker.', 'threadId')
    // A reply's id stands for its thread.
    threadId = first.thread_id ?? first.id
    if ((await repo.countReplies(s.db, threadId)) >= THREAD_REPLIES_MAX)
      throw HttpError.conflict(`This thread already has ${THREAD_REPLIES_MAX} replies, the most one holds: start a new thread.`)
  }
  const made = await s.db.transaction().execute(async (tx) => {
    const row = await repo.insertComment(tx, { markerId, sceneId: marker.scene_id, threadId, authorId: userId, body: body.body })
    // Replying to a resolved thread opens it again: there is something new to answer.
    if (threadId) await repo.setThreadResolved(tx, threadId, null, false)
    // The author hears of others' comments; nobody is told of their own.
    if (marker.created_by && marker.created_by !== userId) await repo.insertNotice(tx, row.id, marker.created_by)
    return row
  })
  await s.live.checkStored(marker.scene_id, markerId)
  const t = await thread(s, threadId ?? made.id)
  return { comment: t.comments.find((c) => c.id === made.id)!, thread: t }
}

/** Resolves or reopens the thread of a comment (any comment of it stands for the thread). */
export async function setResolved(s: Services, commentId: string, resolved: boolean, userId: string | null): Promise<CommentThread> {
  const comment = await repo.findComment(s.db, commentId)
  if (!comment) throw HttpError.notFound('No such comment.')
  const threadId = comment.thread_id ?? comment.id
  // Already so: nothing changes, nothing to tell.
  if (await repo.setThreadResolved(s.db, threadId, userId, resolved)) await s.live.checkStored(comment.scene_id, comment.marker_id)
  return thread(s, threadId)
}
