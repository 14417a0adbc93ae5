import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { can, type Role } from '@shared/auth/roles'
import type { Export, ExportCreateBody } from '@shared/schemas'
import * as exportsApi from '@/api/exports'
import { useSessionStore } from '@/stores/session'
import { queryKeys } from './queryKeys'

const POLL_MS = 700

const isActive = (e: Export) => e.status === 'queued' || e.status === 'running'

/**
 * Whether this person may take points away as files: the same right as downloading an original scan
 * (members; a guest only when the viewing pass allows downloads).
 */
export function useCanExport(role: MaybeRefOrGetter<Role | undefined>) {
  const session = useSessionStore()
  return computed(() => {
    const r = toValue(role)
    return can(r, 'downloadOriginals') || (r === 'guest' && !!session.guest?.allowDownload)
  })
}

/** The scene's exports; polled while one is queued or running, so progress moves on screen. */
export function useSceneExports(sceneId: MaybeRefOrGetter<string>, enabled: MaybeRefOrGetter<boolean>) {
  return useQuery({
    queryKey: computed(() => queryKeys.exports(toValue(sceneId))),
    queryFn: ({ signal }) => exportsApi.listExports(toValue(sceneId), signal),
    enabled: computed(() => toValue(enabled)),
    staleTime: 0,
    refetchInterval: (q) => (q.state.data?.some(isActive) ? POLL_MS : false),
    meta: { inlineErrors: true },
  })
}

export function useCreateExport(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return useMutation({
    mutationFn: (body: ExportCreateBody) => exportsApi.createExport(toValue(sceneId), body),
    onSuccess: (created) => {
      client.setQueryData<Export[]>(queryKeys.exports(created.sceneId), (list) => [created, ...(list ?? [])])
    },
    meta: { inlineErrors: true },
  })
}
