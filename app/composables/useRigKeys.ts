import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import * as tokensApi from '@/api/uploadTokens'
import { queryKeys } from './queryKeys'

/** The project's rig keys (upload tokens in the API), revoked ones included. Only owners may ask. */
export function useRigKeys(projectId: MaybeRefOrGetter<string>, enabled: MaybeRefOrGetter<boolean> = true) {
  return useQuery({
    queryKey: computed(() => queryKeys.uploadTokens(toValue(projectId))),
    queryFn: ({ signal }) => tokensApi.listUploadTokens(toValue(projectId), signal),
    enabled: computed(() => toValue(enabled)),
    meta: { errorTitle: 'Could not load the rig keys' },
  })
}

function useRefreshRigKeys(projectId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return () => client.invalidateQueries({ queryKey: queryKeys.uploadTokens(toValue(projectId)) })
}

/** Errors show on the create form. The answer holds the secret: keep it only as long as it is on screen. */
export function useCreateRigKey(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshRigKeys(projectId)
  return useMutation({
    mutationFn: (label: string) => tokensApi.createUploadToken(toValue(projectId), label),
    onSuccess: () => refresh(),
    meta: { inlineErrors: true },
  })
}

export function useRevokeRigKey(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshRigKeys(projectId)
  return useMutation({
    mutationFn: (tokenId: string) => tokensApi.revokeUploadToken(tokenId),
    onSuccess: () => refresh(),
    meta: { errorTitle: 'Rig key not revoked' },
  })
}
