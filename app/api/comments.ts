import { CommentCreated, CommentThreadList, CommentThreadResponse, type Comment, type CommentCreateBody, type CommentThread } from '@shared/schemas'
import { apiPath, http } from './http'

/** The marker's comment threads, oldest first, each with its replies in order. */
export async function listThreads(markerId: string, signal?: AbortSignal): Promise<CommentThread[]> {
  return (await http.get(apiPath`/api/markers/${markerId}/comments`, CommentThreadList, { signal })).threads
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
