import { toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQueryClient } from '@tanstack/vue-query'
import type { Marker, MarkerReviewBody } from '@shared/schemas'
import * as markersApi from '@/api/markers'
import { queryKeys } from './queryKeys'

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
