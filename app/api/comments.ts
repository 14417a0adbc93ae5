import { CommentCreated, CommentThreadList, CommentThreadResponse, type Comment, type CommentCreateBody, type CommentThread } from '@shared/schemas'
import { apiPath, http } from './http'

/** A page of the marker's comment threads (oldest first within it, each with its replies), the latest page when `before` is absent. */
export async function listThreads(markerId: string, before: string | undefined, signal?: AbortSignal): Promise<{ threads: CommentThread[]; earlier: string | null }> {
  const path = apiPath`/api/markers/${markerId}/comments`
  return http.get(before ? `${path}?before=${encodeURIComponent(before)}` : path, CommentThreadList, { signal })
}

/** A new thread, or (with threadId) a reply in one. */
export async function postComment(markerId: string, body: CommentCreateBody): Promise<{ comment: Comment; thread: CommentThread }> {
  return http.post(apiPath`/api/markers/${markerId}/comments`, body, CommentCreated)
}

export async function resolveThread(threadId: string): Promise<CommentThread> {
  return (await http.post(apiPath`/api/comments/${threadId}/resolve`, undefined, CommentThreadResponse)).thread
}

export async function reopenThread(threadId: string): Promise<CommentThread> {
  return (await http.post(apiPath`/api/comments/${threadId}/reopen`, undefined, CommentThreadResponse)).thread
}
