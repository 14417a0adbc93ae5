import { z } from 'zod'
import { Id } from './common'

/**
 * Long lists (a marker's history, its comment threads) come a page at a time, newest page first: `limit`
 * items, and `before` the cursor an earlier answer gave as `earlier` (null once the first item is in).
 * Each page is in reading order (oldest first), so a client puts an earlier page in front of what it has.
 */
export const PAGE_LIMIT_MAX = 200

const limit = (byDefault: number) =>
  z.coerce
    .number({ error: 'must be a number' })
    .int({ error: 'must be a whole number' })
    .min(1, { error: 'must be at least 1' })
    .max(PAGE_LIMIT_MAX, { error: `must be at most ${PAGE_LIMIT_MAX}` })
    .default(byDefault)

export const HISTORY_PAGE = 50
export const THREADS_PAGE = 20
/** A thread holds at most this many replies; past it, the answer says to start a new thread. */
export const THREAD_REPLIES_MAX = 500

export const HistoryPageQuery = z
  .object({ limit: limit(HISTORY_PAGE), before: z.string().regex(/^\d{1,18}$/, { error: 'must be a revision id from an earlier page' }).optional() })
  .strict()
export type HistoryPageQuery = z.infer<typeof HistoryPageQuery>

export const ThreadsPageQuery = z.object({ limit: limit(THREADS_PAGE), before: Id.optional() }).strict()
export type ThreadsPageQuery = z.infer<typeof ThreadsPageQuery>

/** Where the next (earlier) page starts, or null when this page reaches the beginning. */
export const Earlier = z.string().nullable()
