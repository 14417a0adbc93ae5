import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { CommentThread, Marker, MarkerReviewBody } from '@shared/schemas'
import * as commentsApi from '@/api/comments'
import * as markersApi from '@/api/markers'
import { queryKeys } from './queryKeys'

/** What changes whenever the marker's comments do (the record document carries it): the threads are asked for again. */
export function commentsVersion(marker: Pick<Marker, 'comments'>): string {
  const c = marker.comments
  return `${c.count}:${c.open}:${c.lastAt ?? ''}`
}

/** The thread as the server answered it, into the cached list (in place, or at the end). */
function withThread(list: CommentThread[] | undefined, thread: CommentThread): CommentThread[] {
  const at = list?.findIndex((t) => t.id === thread.id) ?? -1
  if (!list || at === -1) return [...(list ?? []), thread]
  const next = list.slice()
  next[at] = thread
  return next
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
  const query = useQuery({
    queryKey: key,
    queryFn: ({ signal }) => commentsApi.listThreads(toValue(markerId), signal),
    placeholderData: keepPreviousData,
    meta: { errorTitle: 'Could not load the comments' },
  })
  const put = (thread: CommentThread) => client.setQueryData<CommentThread[]>(key.value, (list) => withThread(list, thread))
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
  return { query, threads: computed(() => query.data.value ?? []), post, resolve }
}

/**
 * Setting a marker's review. The answer goes into the scene's markers at once; with the live documents the
 * record entry then says the same for everyone.
 */
export function useMarkerReview(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return useMutation({
    mutationFn: (input: { markerId: string; body: MarkerReviewBody }) => markersApi.reviewMarker(input.markerId, input.body),
    onSuccess: (marker) => {
      client.setQueryData<Marker[]>(queryKeys.markers(toValue(sceneId)), (list) => list?.map((m) => (m.id === marker.id ? { ...m, review: marker.review } : m)))
      void client.invalidateQueries({ queryKey: queryKeys.markerHistory(marker.id) })
    },
    meta: { errorTitle: 'Review not saved', inlineErrors: true },
  })
}
