import { computed, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { anchorsToLive, markerFromDocuments, type LiveMarker } from '@shared/collab/documents'
import { MarkerCreateBody, type Anchor, type Marker, type MarkerUpdateBody, type Scene } from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import { ApiError } from '@/api/http'
import * as markersApi from '@/api/markers'
import type { LiveWriter } from './useLiveScene'
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
  /** The scene's live documents: once ready, edits go through them (and wait in them while offline). */
  live?: LiveWriter
}

/** A marker's id made here, for one made while offline (the server takes it as it is). */
function newMarkerId(): string {
  if (typeof crypto.randomUUID === 'function') return crypto.randomUUID()
  const b = crypto.getRandomValues(new Uint8Array(16))
  b[6] = (b[6]! & 0x0f) | 0x40
  b[8] = (b[8]! & 0x3f) | 0x80
  const h = [...b].map((v) => v.toString(16).padStart(2, '0')).join('')
  return `${h.slice(0, 8)}-${h.slice(8, 12)}-${h.slice(12, 16)}-${h.slice(16, 20)}-${h.slice(20)}`
}

/**
 * A marker as the work document keeps it, validated as the server validates it (the same shared schema):
 * a bad one is refused here with the field named, as the API would, and never reaches the document.
 */
export function liveEntryOf(body: MarkerCreateBody, label: string, matrices: Map<string, number[]>): LiveMarker {
  const parsed = MarkerCreateBody.safeParse({ ...body, label })
  if (!parsed.success) {
    const issue = parsed.error.issues[0]!
    const field = issue.path.join('.')
    throw new ApiError(400, ErrorCode.invalidInput, `body.${field}: ${issue.message}`, field)
  }
  parsed.data.anchors.forEach((a: Anchor, i: number) => {
    if (!matrices.has(a.instanceId)) throw new ApiError(400, ErrorCode.invalidInput, `body.anchors.${i}.instanceId: no placement with this id in the scene.`, `anchors.${i}.instanceId`)
  })
  return { kind: parsed.data.kind, label, anchors: anchorsToLive(parsed.data.anchors, matrices), params: parsed.data.params as Record<string, unknown> }
}

/**
 * A scene's markers with their checks, and the changes to them. With the live documents ready, the list is
 * what they hold (useLiveScene mirrors them into this query's cache) and changes and removals are written
 * into the work document, offline too; a new marker goes through the API while online (the server answers
 * with its check, or with what is wrong) and into the document while offline. Without the documents, the
 * list follows the server once a second while any check is pending, each change puts the server's answer
 * into the cache, and changing a marker or moving a placement asks for the list again, since clearances that
 * name a section are re-checked with it.
 */
export function useMarkers(sceneId: MaybeRefOrGetter<string>, options: MarkerOptions = {}) {
  const client = useQueryClient()
  const key = () => queryKeys.markers(toValue(sceneId))

  const query = useQuery({
    queryKey: computed(key),
    queryFn: ({ signal }) => markersApi.listMarkers(toValue(sceneId), signal),
    refetchInterval: (q) => (!options.live?.ready.value && hasPendingCheck(q.state.data) ? PENDING_REFETCH_MS : false),
    // The documents are the reader once they are there.
    enabled: computed(() => !options.live?.ready.value),
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

  const live = options.live
  const viaDocument = () => live !== undefined && live.ready.value
  const localMarker = (id: string, entry: LiveMarker): Marker =>
    markerFromDocuments(id, toValue(sceneId), entry, undefined, live!.matrices(), true, new Date().toISOString())

  const create = useMutation({
    mutationFn: async (body: MarkerCreateBody) => {
      if (!viaDocument() || live!.status.value === 'online') return markersApi.createMarker(toValue(sceneId), body)
      // Offline: into the document, with the label the server would give; stored and checked on reconnect.
      const same = markers.value.filter((m) => m.kind === body.kind).length
      const entry = liveEntryOf(body, body.label ?? `${body.kind} ${same + 1}`, live!.matrices())
      const id = newMarkerId()
      live!.putMarker(id, entry)
      return localMarker(id, entry)
    },
    onSuccess: put,
    meta: { errorTitle: 'Marker not saved', inlineErrors: options.inlineErrors ?? false },
  })

  /** Label, anchors or params (replaced whole). */
  const update = useMutation({
    mutationFn: async (input: { markerId: string; body: MarkerUpdateBody }) => {
      if (!viaDocument()) return markersApi.updateMarker(input.markerId, input.body)
      const current = markers.value.find((m) => m.id === input.markerId)
      if (!current) throw new ApiError(404, ErrorCode.notFound, 'No such marker.')
      const { label, anchors, params } = { ...current, ...input.body }
      const entry = liveEntryOf({ kind: current.kind, anchors, params } as MarkerCreateBody, label, live!.matrices())
      live!.putMarker(current.id, entry)
      return localMarker(current.id, entry)
    },
    onSuccess: (marker) => {
      if (viaDocument()) return
      put(marker)
      refresh()
    },
    meta: { errorTitle: 'Marker not saved', inlineErrors: options.inlineErrors ?? false },
  })

  const remove = useMutation({
    mutationFn: async (markerId: string) => {
      if (viaDocument()) live!.deleteMarker(markerId)
      else await markersApi.deleteMarker(markerId)
    },
    onSuccess: (_r, markerId) => {
      client.setQueryData<Marker[]>(key(), (list) => list?.filter((m) => m.id !== markerId))
      refresh()
    },
    meta: { errorTitle: 'Marker not deleted' },
  })

  return { query, markers, pending, create, update, remove }
}
