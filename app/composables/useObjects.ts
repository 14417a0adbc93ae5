import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { ObjectCreateBody, ObjectTrimCreateBody, ObjectUpdateBody, SceneCutCreateBody, TrimUpdateBody } from '@shared/schemas'
import * as objectsApi from '@/api/objects'
import { queryKeys } from './queryKeys'

/** The scene's objects (members, stray settings, members' trims in the scene frame). */
export function useObjects(sceneId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.objects(toValue(sceneId))),
    queryFn: ({ signal }) => objectsApi.listObjects(toValue(sceneId), signal),
    meta: { errorTitle: 'Could not load the objects' },
  })
}

/** Every placement's scene cuts, by placement id (asked for together: a scene holds a handful of placements). */
export function useSceneCuts(sceneId: MaybeRefOrGetter<string>, instanceIds: MaybeRefOrGetter<readonly string[]>) {
  return useQuery({
    queryKey: computed(() => [...queryKeys.sceneCuts(toValue(sceneId)), [...toValue(instanceIds)].sort().join()] as const),
    queryFn: async ({ signal }) => {
      const ids = toValue(instanceIds)
      const lists = await Promise.all(ids.map((id) => objectsApi.listSceneCuts(id, signal)))
      return new Map(ids.map((id, i) => [id, lists[i]!]))
    },
    enabled: computed(() => toValue(instanceIds).length > 0),
    meta: { errorTitle: 'Could not load the scene cuts' },
  })
}

/** What the object keeps: counts per member, stray points dropped, the preview's sample (asked again per revision). */
export function useObjectPoints(objectId: MaybeRefOrGetter<string | null>, revision: MaybeRefOrGetter<number>) {
  return useQuery({
    queryKey: computed(() => queryKeys.objectPoints(toValue(objectId) ?? '', toValue(revision))),
    queryFn: ({ signal }) => objectsApi.objectPoints(toValue(objectId)!, signal),
    enabled: computed(() => !!toValue(objectId)),
    meta: { inlineErrors: true },
  })
}

/**
 * Writes to objects and trims. Failures are the panel's to show (the field named); after any write the objects,
 * the scene cuts and the markers are asked for again (the server re-checks markers that read those points).
 */
export function useObjectWrites(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  const refresh = () => {
    const id = toValue(sceneId)
    void client.invalidateQueries({ queryKey: queryKeys.objects(id) })
    void client.invalidateQueries({ queryKey: queryKeys.sceneCuts(id) })
    void client.invalidateQueries({ queryKey: queryKeys.markers(id) })
  }
  const options = { onSuccess: refresh, meta: { inlineErrors: true } }
  return {
    createObject: useMutation({ mutationFn: (body: ObjectCreateBody) => objectsApi.createObject(toValue(sceneId), body), ...options }),
    updateObject: useMutation({ mutationFn: (input: { objectId: string; body: ObjectUpdateBody }) => objectsApi.updateObject(input.objectId, input.body), ...options }),
    deleteObject: useMutation({ mutationFn: (objectId: string) => objectsApi.deleteObject(objectId), ...options }),
    createMemberTrim: useMutation({ mutationFn: (input: { objectId: string; body: ObjectTrimCreateBody }) => objectsApi.createObjectTrim(input.objectId, input.body), ...options }),
    createSceneCut: useMutation({ mutationFn: (input: { instanceId: string; body: SceneCutCreateBody }) => objectsApi.createSceneCut(input.instanceId, input.body), ...options }),
    updateTrim: useMutation({ mutationFn: (input: { trimId: string; body: TrimUpdateBody }) => objectsApi.updateTrim(input.trimId, input.body), ...options }),
    deleteTrim: useMutation({ mutationFn: (trimId: string) => objectsApi.deleteTrim(trimId), ...options }),
  }
}
