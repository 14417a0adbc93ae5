import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useQuery } from '@tanstack/vue-query'
import { ObjectList, type SceneObject } from '@shared/schemas/objects'
import { apiPath, http } from '@/api/http'

/** The scene's objects (GET /api/scenes/:sceneId/objects), for the size tool's list. */
export async function listSceneObjects(sceneId: string, signal?: AbortSignal): Promise<SceneObject[]> {
  return (await http.get(apiPath`/api/scenes/${sceneId}/objects`, ObjectList, { signal })).objects
}

/** The scene's objects, cached under the scene (['scenes', id, 'objects']). */
export function useSceneObjects(sceneId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => ['scenes', toValue(sceneId), 'objects'] as const),
    queryFn: ({ signal }) => listSceneObjects(toValue(sceneId), signal),
    enabled: computed(() => !!toValue(sceneId)),
    meta: { inlineErrors: true },
  })
}
