import { computed, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { Marker, MarkerCreateBody, MarkerUpdateBody, Scene } from '@shared/schemas'
import * as markersApi from '@/api/markers'
import { queryKeys } from './queryKeys'
import { useScene } from './useScenes'

/** While any marker's check is pending, the list is asked for again this often (the server re-checks in the background). */
export const PENDING_REFETCH_MS = 1000

export function hasPendingCheck(markers: readonly Marker[] | undefined): boolean {
  return markers?.some((m) => m.check.state === 'pending') ?? false
}

/** Where placements sit: when this changes, the server has set their markers back to pending. */
function placementsSignature(scene: Scene | undefined): string | undefined {
  return scene?.instances.map((i) => `${i.id}:${i.matrix.join(',')}`).join('|')
}

/** The answered marker into the scene's list, in place or at the end. */
function withMarker(list: Marker[] | undefined, marker: Marker): Marker[] | undefined {
  if (!list) return list
  const at = list.findIndex((m) => m.id === marker.id)
  if (at === -1) return [...list, marker]
  const next = list.slice()
  next[at] = marker
  return next
}

interface MarkerOptions {
  /** The caller shows create and update failures itself (a tool's form); otherwise they become toasts. */
  inlineErrors?: boolean
}

/**
 * A scene's markers with their checks, and the changes to them. The list follows the server once a second
 * while any check is pending; each change puts the server's answer (checked before it answers) into the
 * cache. Changing or removing a marker also asks for the list again, since clearances that name a section
 * are re-checked with it. Moving a placement (the scene's cache changes) asks again too.
 */
export function useMarkers(sceneId: MaybeRefOrGetter<string>, options: MarkerOptions = {}) {
  const client = useQueryClient()
  const key = () => queryKeys.markers(toValue(sceneId))

  const query = useQuery({
    queryKey: computed(key),
    queryFn: ({ signal }) => markersApi.listMarkers(toValue(sceneId), signal),
    refetchInterval: (q) => (hasPendingCheck(q.state.data) ? PENDING_REFETCH_MS : false),
    meta: { errorTitle: 'Could not load the markers' },
  })
  const markers = computed<Marker[]>(() => query.data.value ?? [])
  const pending = computed(() => hasPendingCheck(query.data.value))

  const put = (marker: Marker) => client.setQueryData<Marker[]>(queryKeys.markers(marker.sceneId), (list) => withMarker(list, marker))
  // cancelRefetch false: the page may hold two of these (toasts and inline errors); one fetch serves both.
  const refresh = () => void client.invalidateQueries({ queryKey: key(), exact: true }, { cancelRefetch: false })

  // The scene page holds the same scene query; sharing it costs no request.
  const { data: scene } = useScene(sceneId)
  watch(
    () => placementsSignature(scene.value),
    (now, before) => {
      if (before !== undefined && now !== before) refresh()
    },
  )

  const create = useMutation({
    mutationFn: (body: MarkerCreateBody) => markersApi.createMarker(toValue(sceneId), body),
    onSuccess: put,
    meta: { errorTitle: 'Marker not saved', inlineErrors: options.inlineErrors ?? false },
  })

  /** Label, anchors or params (replaced whole). */
  const update = useMutation({
    mutationFn: (input: { markerId: string; body: MarkerUpdateBody }) => markersApi.updateMarker(input.markerId, input.body),
    onSuccess: (marker) => {
      put(marker)
      refresh()
    },
    meta: { errorTitle: 'Marker not saved', inlineErrors: options.inlineErrors ?? false },
  })

  const remove = useMutation({
    mutationFn: (markerId: string) => markersApi.deleteMarker(markerId),
    onSuccess: (_r, markerId) => {
      client.setQueryData<Marker[]>(key(), (list) => list?.filter((m) => m.id !== markerId))
      refresh()
    },
    meta: { errorTitle: 'Marker not deleted' },
  })

  return { query, markers, pending, create, update, remove }
}
