import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import type { Pass, PassCreateBody } from '@shared/schemas'
import * as passesApi from '@/api/passes'
import { queryKeys } from './queryKeys'

/** The project's viewing passes (owners only), revoked and expired ones included. */
export function usePasses(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.passes(toValue(projectId))),
    queryFn: ({ signal }) => passesApi.listPasses(toValue(projectId), signal),
    meta: { errorTitle: 'Could not load the viewing passes' },
  })
}

function useRefreshPasses(projectId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return () => client.invalidateQueries({ queryKey: queryKeys.passes(toValue(projectId)) })
}

/** Errors show on the form. */
export function useCreatePass(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshPasses(projectId)
  return useMutation({
    mutationFn: (body: PassCreateBody) => passesApi.createPass(toValue(projectId), body),
    onSuccess: () => refresh(),
    meta: { inlineErrors: true },
  })
}

/** Revocation after a confirm: the guest's page and live view stop at once. */
export function usePassRevocation(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshPasses(projectId)
  const confirm = useConfirm()
  const toast = useToast()
  const revoke = useMutation({
    mutationFn: (pass: Pass) => passesApi.revokePass(pass.id),
    onSuccess: (_r, pass) => {
      toast.add({ severity: 'success', summary: 'Viewing pass revoked', detail: `${pass.name} no longer sees this project.`, life: 4000 })
      return refresh()
    },
    meta: { errorTitle: 'Viewing pass not revoked' },
  })

  function ask(pass: Pass): void {
    confirm.require({
      header: `Revoke the viewing pass of ${pass.name}?`,
      message: `${pass.name} (${pass.email}) stops seeing this project at once, an open scene included. This cannot be undone; send a new pass if needed.`,
      acceptProps: { label: 'Revoke', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Keep it', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: () => revoke.mutateAsync(pass).catch(() => undefined),
    })
  }

  const revokingId = computed(() => (revoke.isPending.value ? (revoke.variables.value?.id ?? null) : null))
  return { ask, revokingId }
}
