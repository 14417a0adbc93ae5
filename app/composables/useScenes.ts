import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { Instance, InstanceUpdateBody, Scene } from '@shared/schemas'
import * as scenesApi from '@/api/scenes'
import { queryKeys } from './queryKeys'

/** The project's scenes (name and placement count), as the server orders them. */
export function useScenes(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.scenes(toValue(projectId))),
    queryFn: ({ signal }) => scenesApi.listScenes(toValue(projectId), signal),
    meta: { errorTitle: 'Could not load the scenes' },
  })
}

/** One scene with its placements; the page shows "not found" itself. */
export function useScene(sceneId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.scene(toValue(sceneId))),
    queryFn: ({ signal }) => scenesApi.getScene(toValue(sceneId), signal),
    meta: { inlineErrors: true },
  })
}

/** Writes answers into the cache: the scene itself, and a fresh list for its counts. */
function useSceneCache() {
  const client = useQueryClient()
  const refreshList = (projectId: string) => void client.invalidateQueries({ queryKey: queryKeys.scenes(projectId), exact: true })
  return {
    putScene(scene: Scene): void {
      client.setQueryData(queryKeys.scene(scene.id), scene)
      refreshList(scene.projectId)
    },
    putInstance(instance: Instance): void {
      const scene = client.getQueryData<Scene>(queryKeys.scene(instance.sceneId))
      if (!scene) return
      const at = scene.instances.findIndex((i) => i.id === instance.id)
      const instances = scene.instances.slice()
      if (at === -1) instances.push(instance)
      else instances[at] = instance
      client.setQueryData<Scene>(queryKeys.scene(scene.id), { ...scene, instances, instanceCount: instances.length })
      if (at === -1) refreshList(scene.projectId)
    },
    dropInstance(sceneId: string, instanceId: string): void {
      const scene = client.getQueryData<Scene>(queryKeys.scene(sceneId))
      if (!scene) return
      const instances = scene.instances.filter((i) => i.id !== instanceId)
      client.setQueryData<Scene>(queryKeys.scene(sceneId), { ...scene, instances, instanceCount: instances.length })
      refreshList(scene.projectId)
    },
    dropScene(projectId: string, sceneId: string): void {
      client.removeQueries({ queryKey: queryKeys.scene(sceneId) })
      refreshList(projectId)
    },
  }
}

/** Errors show on the name dialog's form. */
export function useCreateScene(projectId: MaybeRefOrGetter<string>) {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (name: string) => scenesApi.createScene(toValue(projectId), name),
    onSuccess: (scene) => cache.putScene(scene),
    meta: { inlineErrors: true },
  })
}

export function useRenameScene() {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (input: { sceneId: string; name: string }) => scenesApi.renameScene(input.sceneId, input.name),
    onSuccess: (scene) => cache.putScene(scene),
    meta: { inlineErrors: true },
  })
}

export function useDeleteScene(projectId: MaybeRefOrGetter<string>) {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (sceneId: string) => scenesApi.deleteScene(sceneId),
    onSuccess: (_r, sceneId) => cache.dropScene(toValue(projectId), sceneId),
    meta: { errorTitle: 'Scene not deleted' },
  })
}

export function useAddInstance(sceneId: MaybeRefOrGetter<string>) {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (scanId: string) => scenesApi.addInstance(toValue(sceneId), { scanId }),
    onSuccess: (instance) => cache.putInstance(instance),
    meta: { errorTitle: 'Scan not placed' },
  })
}

/** Matrix, visibility or colour. With `inlineErrors` the caller shows failures (the transform form); else a toast. */
export function useUpdateInstance(options: { inlineErrors?: boolean } = {}) {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (input: { instanceId: string; body: InstanceUpdateBody }) => scenesApi.updateInstance(input.instanceId, input.body),
    onSuccess: (instance) => cache.putInstance(instance),
    meta: { errorTitle: 'Placement not saved', inlineErrors: options.inlineErrors ?? false },
  })
}

export function useDeleteInstance(sceneId: MaybeRefOrGetter<string>) {
  const cache = useSceneCache()
  return useMutation({
    mutationFn: (instanceId: string) => scenesApi.deleteInstance(instanceId),
    onSuccess: (_r, instanceId) => cache.dropInstance(toValue(sceneId), instanceId),
    meta: { errorTitle: 'Placement not removed' },
  })
}
