import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import type { Invite, InviteCreateBody } from '@shared/schemas'
import * as invitesApi from '@/api/invites'
import { queryKeys } from './queryKeys'

/** The project's invitations still waiting (owners only). */
export function useInvites(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.invites(toValue(projectId))),
    queryFn: ({ signal }) => invitesApi.listInvites(toValue(projectId), signal),
    meta: { errorTitle: 'Could not load the invitations' },
  })
}

function useRefreshInvites(projectId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return () => client.invalidateQueries({ queryKey: queryKeys.invites(toValue(projectId)) })
}

/** Errors (409 on the address, 429) show on the form. */
export function useCreateInvite(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshInvites(projectId)
  return useMutation({
    mutationFn: (body: InviteCreateBody) => invitesApi.createInvite(toValue(projectId), body),
    onSuccess: () => refresh(),
    meta: { inlineErrors: true },
  })
}

/** Send again (a new link, the old one dead) and withdraw (after a confirm); failures go to the toast. */
export function useInviteActions(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshInvites(projectId)
  const confirm = useConfirm()
  const toast = useToast()
  const resend = useMutation({
    mutationFn: (invite: Invite) => invitesApi.resendInvite(invite.id),
    onSuccess: (invite) => {
      toast.add({ severity: 'success', summary: 'Invitation sent again', detail: `${invite.email} has a new link; the earlier one no longer works.`, life: 5000 })
      return refresh()
    },
    meta: { errorTitle: 'Invitation not sent again' },
  })
  const revoke = useMutation({
    mutationFn: (invite: Invite) => invitesApi.revokeInvite(invite.id),
    onSuccess: (_r, invite) => {
      toast.add({ severity: 'success', summary: 'Invitation withdrawn', detail: `The link sent to ${invite.email} no longer works.`, life: 4000 })
      return refresh()
    },
    meta: { errorTitle: 'Invitation not withdrawn' },
  })

  function withdraw(invite: Invite): void {
    confirm.require({
      header: `Withdraw the invitation to ${invite.email}?`,
      message: 'The link in their e-mail stops working at once. You can invite the address again later.',
      acceptProps: { label: 'Withdraw', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Keep it', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: () => revoke.mutateAsync(invite).catch(() => undefined),
    })
  }

  /** The invitation whose button waits for the server. */
  const busyId = computed(() => (resend.isPending.value ? resend.variables.value?.id : revoke.isPending.value ? revoke.variables.value?.id : null) ?? null)
  return { resend: (invite: Invite) => resend.mutateAsync(invite).catch(() => undefined), withdraw, busyId }
}
