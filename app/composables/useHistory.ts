import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useInfiniteQuery, useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import * as checkpointsApi from '@/api/checkpoints'
import * as markersApi from '@/api/markers'
import { queryKeys } from './queryKeys'

/**
 * A marker's versions (from marker_revisions, not from the live document, whose history Yjs prunes) and
 * restoring one. `version` is anything that changes when the marker does (its revision and label): the
 * history is asked for again then, since a live edit is recorded once it settles.
 */
export function useMarkerHistory(markerId: MaybeRefOrGetter<string>, version: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  // Pages come newest first; `earlier` says where the one before starts ("Show earlier" asks for it).
  const query = useInfiniteQuery({
    queryKey: computed(() => [...queryKeys.markerHistory(toValue(markerId)), toValue(version)]),
    queryFn: ({ pageParam, signal }) => markersApi.markerHistory(toValue(markerId), pageParam, signal),
    initialPageParam: undefined as string | undefined,
    getNextPageParam: (page) => page.earlier ?? undefined,
    meta: { errorTitle: 'Could not load the marker’s history' },
  })
  /** Every loaded revision, oldest first. */
  const revisions = computed(() => [...(query.data.value?.pages ?? [])].reverse().flatMap((p) => p.revisions))
  const restore = useMutation({
    mutationFn: (revisionId: string) => markersApi.restoreMarker(toValue(markerId), revisionId),
    onSuccess: () => void client.invalidateQueries({ queryKey: queryKeys.markerHistory(toValue(markerId)) }),
    meta: { errorTitle: 'Version not restored' },
  })
  return { query, revisions, restore }
}

/** The scene's named checkpoints, setting and removing them. */
export function useCheckpoints(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  const key = () => queryKeys.checkpoints(toValue(sceneId))
  const query = useQuery({
    queryKey: computed(key),
    queryFn: ({ signal }) => checkpointsApi.listCheckpoints(toValue(sceneId), signal),
    meta: { errorTitle: 'Could not load the checkpoints' },
  })
  const create = useMutation({
    mutationFn: (name: string) => checkpointsApi.createCheckpoint(toValue(sceneId), name),
    onSuccess: () => void client.invalidateQueries({ queryKey: key() }),
    meta: { errorTitle: 'Checkpoint not set', inlineErrors: true },
  })
  const remove = useMutation({
    mutationFn: (checkpointId: string) => checkpointsApi.deleteCheckpoint(checkpointId),
    onSuccess: () => void client.invalidateQueries({ queryKey: key() }),
    meta: { errorTitle: 'Checkpoint not removed' },
  })
  return { query, create, remove }
}

/** One checkpoint's frozen markers. */
export function useCheckpoint(checkpointId: MaybeRefOrGetter<string | null>) {
  return useQuery({
    queryKey: computed(() => queryKeys.checkpoint(toValue(checkpointId) ?? 'none')),
    queryFn: ({ signal }) => checkpointsApi.getCheckpoint(toValue(checkpointId)!, signal),
    enabled: computed(() => toValue(checkpointId) !== null),
    staleTime: Infinity, // frozen
    meta: { errorTitle: 'Could not load the checkpoint' },
  })
}

/** The scene's markers as they were at a time (null: no time chosen). */
export function useSceneStateAt(sceneId: MaybeRefOrGetter<string>, at: MaybeRefOrGetter<string | null>) {
  return useQuery({
    queryKey: computed(() => queryKeys.sceneState(toValue(sceneId), toValue(at) ?? 'none')),
    queryFn: ({ signal }) => markersApi.sceneStateAt(toValue(sceneId), toValue(at)!, signal),
    enabled: computed(() => toValue(at) !== null),
    meta: { errorTitle: 'Could not load the scene at that time' },
  })
}
