import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { MemberRole } from '@shared/auth/roles'
import * as membersApi from '@/api/members'
import { useSessionStore } from '@/stores/session'
import { queryKeys } from './queryKeys'

export function useMembers(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.members(toValue(projectId))),
    queryFn: ({ signal }) => membersApi.listMembers(toValue(projectId), signal),
    meta: { errorTitle: 'Could not load the members' },
  })
}

/** After any change: the member list, the project's member count and (own role changes) the role. */
function useRefreshProject(projectId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return () => client.invalidateQueries({ queryKey: queryKeys.project(toValue(projectId)) }).then(() =>
    client.invalidateQueries({ queryKey: queryKeys.projects(), exact: true }),
  )
}

export function useChangeMemberRole(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshProject(projectId)
  return useMutation({
    mutationFn: (input: { userId: string; role: MemberRole }) =>
      membersApi.updateMember(toValue(projectId), input.userId, { role: input.role }),
    onSuccess: refresh,
    meta: { errorTitle: 'Role not changed' },
  })
}

export function useRemoveMember(projectId: MaybeRefOrGetter<string>) {
  const refresh = useRefreshProject(projectId)
  const client = useQueryClient()
  const session = useSessionStore()
  return useMutation({
    mutationFn: (userId: string) => membersApi.removeMember(toValue(projectId), userId),
    onSuccess: (_result, userId) => {
      if (userId !== session.user?.id) return refresh()
      // Whoever leaves can no longer read the project: drop it rather than refetch into a 404.
      client.removeQueries({ queryKey: queryKeys.project(toValue(projectId)) })
      return client.invalidateQueries({ queryKey: queryKeys.projects(), exact: true })
    },
    meta: { errorTitle: 'Member not removed' },
  })
}
