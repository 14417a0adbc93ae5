import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import type { UploadToken } from '@shared/schemas'
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
    mutationFn: (body: { label: string; expiresInDays: number }) => tokensApi.createUploadToken(toValue(projectId), body),
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

/** Revocation after a confirm: the rig's next upload is refused at once. */
export function useRigKeyRevocation(projectId: MaybeRefOrGetter<string>) {
  const revoke = useRevokeRigKey(projectId)
  const confirm = useConfirm()
  const toast = useToast()

  function ask(token: UploadToken): void {
    confirm.require({
      header: `Revoke the rig key “${token.label}”?`,
      message: `A rig or tablet posting with ${token.hint} is refused from now on. Scans it already sent stay. This cannot be undone; make a new key if needed.`,
      acceptProps: { label: 'Revoke', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Keep it', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: async () => {
        try {
          await revoke.mutateAsync(token.id)
        } catch {
          return // shown by the global handler
        }
        toast.add({ severity: 'success', summary: 'Rig key revoked', detail: `“${token.label}” no longer works.`, life: 4000 })
      },
    })
  }

  const revokingId = computed(() => (revoke.isPending.value ? (revoke.variables.value ?? null) : null))
  return { ask, revokingId }
}
