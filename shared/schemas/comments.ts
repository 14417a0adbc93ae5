import { z } from 'zod'
import { Id, Timestamp } from './common'
import { PersonRef } from './markers'
import { Earlier } from './paging'

/**
 * Comments on a marker, in threads: a thread starts with a comment (its id is the thread's), replies follow,
 * and the thread is resolved and reopened as a whole. Owners, measurers and mentors comment; guests read.
 */
export const COMMENT_MAX = 4000

export const CommentParams = z.object({ commentId: Id })

export const CommentCreateBody = z
  .object({
    body: z
      .string({ error: 'must be text' })
      .trim()
      .min(1, { error: 'must not be empty' })
      .max(COMMENT_MAX, { error: `must be at most ${COMMENT_MAX} characters` }),
    /** Reply in this thread (its first comment's id); without it, the comment starts a new thread. */
    threadId: Id.optional(),
  })
  .strict()
export type CommentCreateBody = z.infer<typeof CommentCreateBody>

export const Comment = z.object({
  id: Id,
  markerId: Id,
  /** Null for a thread's first comment. */
  threadId: Id.nullable(),
  author: PersonRef,
  body: z.string(),
  createdAt: Timestamp,
})
export type Comment = z.infer<typeof Comment>

export const CommentThread = z.object({
  /** The first comment's id. */
  id: Id,
  markerId: Id,
  resolved: z.object({ by: PersonRef, at: Timestamp }).nullable(),
  /** Oldest first; the first one opened the thread. */
  comments: z.array(Comment).min(1),
})
export type CommentThread = z.infer<typeof CommentThread>

export const CommentThreadList = z.object({ threads: z.array(CommentThread), earlier: Earlier })
export const CommentThreadResponse = z.object({ thread: CommentThread })
export const CommentCreated = z.object({ comment: Comment, thread: CommentThread })
