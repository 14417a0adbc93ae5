import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { keepPreviousData, useInfiniteQuery, useMutation, useQueryClient, type InfiniteData } from '@tanstack/vue-query'
import type { CommentThread, Marker } from '@shared/schemas'
import * as commentsApi from '@/api/comments'
import { queryKeys } from './queryKeys'

/** What changes whenever the marker's comments do (the record document carries it): the threads are asked for again. */
export function commentsVersion(marker: Pick<Marker, 'comments'>): string {
  const c = marker.comments
  return `${c.count}:${c.open}:${c.lastAt ?? ''}`
}

type ThreadPage = { threads: CommentThread[]; earlier: string | null }
type ThreadPages = InfiniteData<ThreadPage, string | undefined>

/** The thread as the server answered it, into the cached pages (in place, or at the end of the latest page). */
function withThread(data: ThreadPages | undefined, thread: CommentThread): ThreadPages | undefined {
  if (!data) return data
  const held = data.pages.findIndex((p) => p.threads.some((t) => t.id === thread.id))
  const pages = data.pages.map((p, i) => {
    if (held === -1 ? i !== 0 : i !== held) return p
    return { ...p, threads: held === -1 ? [...p.threads, thread] : p.threads.map((t) => (t.id === thread.id ? thread : t)) }
  })
  return { ...data, pages }
}

/**
 * A marker's comment threads and the changes to them. `version` comes from the marker as the live record
 * document mirrors it (commentsVersion): someone else's comment, resolution or reply moves it, and the threads
 * are fetched again within a moment, the last ones shown meanwhile.
 */
export function useMarkerComments(markerId: MaybeRefOrGetter<string>, version: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  const base = () => queryKeys.markerComments(toValue(markerId))
  const key = computed(() => [...base(), toValue(version)] as const)
  // Pages of threads come newest first; "Show earlier threads" asks for the page before.
  const query = useInfiniteQuery({
    queryKey: key,
    queryFn: ({ pageParam, signal }) => commentsApi.listThreads(toValue(markerId), pageParam, signal),
    initialPageParam: undefined as string | undefined,
    getNextPageParam: (page) => page.earlier ?? undefined,
    placeholderData: keepPreviousData,
    meta: { errorTitle: 'Could not load the comments' },
  })
  const put = (thread: CommentThread) => client.setQueryData<ThreadPages>(key.value, (data) => withThread(data, thread))
  const post = useMutation({
    mutationFn: (body: { body: string; threadId?: string }) => commentsApi.postComment(toValue(markerId), body),
    onSuccess: ({ thread }) => put(thread),
    meta: { errorTitle: 'Comment not posted', inlineErrors: true },
  })
  const resolve = useMutation({
    mutationFn: (input: { threadId: string; resolved: boolean }) => (input.resolved ? commentsApi.resolveThread(input.threadId) : commentsApi.reopenThread(input.threadId)),
    onSuccess: put,
    meta: { errorTitle: 'Thread not changed' },
  })
  /** Every loaded thread, oldest first. */
  const threads = computed(() => [...(query.data.value?.pages ?? [])].reverse().flatMap((p) => p.threads))
  return { query, threads, post, resolve }
}
