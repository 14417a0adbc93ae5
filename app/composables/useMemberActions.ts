import { ref, type MaybeRefOrGetter } from 'vue'
import { useRouter } from 'vue-router'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import { ROLE_LABELS, type Role } from '@shared/auth/roles'
import type { Member } from '@shared/schemas'
import { useSessionStore } from '@/stores/session'
import { useChangeMemberRole, useRemoveMember } from './useMembers'

/** A change on its way to the server: the table shows `role` meanwhile and goes back to the server's on failure. */
export interface PendingChange {
  userId: string
  role?: Role
}

/**
 * Role changes and removals on the members table. Failures (such as the 409 "would leave no owner")
 * reach the global toast with the server's message; the table keeps showing the role the server holds.
 */
export function useMemberActions(projectId: MaybeRefOrGetter<string>) {
  const changeRole = useChangeMemberRole(projectId)
  const removeMember = useRemoveMember(projectId)
  const session = useSessionStore()
  const router = useRouter()
  const confirm = useConfirm()
  const toast = useToast()
  const pending = ref<PendingChange | null>(null)

  async function run(change: PendingChange, action: () => Promise<unknown>): Promise<boolean> {
    pending.value = change
    try {
      await action()
      return true
    } catch {
      return false // already shown by the global handler
    } finally {
      pending.value = null
    }
  }

  async function setRole(member: Member, role: Role): Promise<void> {
    // The picker offers members' roles only; a guest comes in with a viewing pass.
    if (role === 'guest') return
    const ok = await run({ userId: member.userId, role }, () => changeRole.mutateAsync({ userId: member.userId, role }))
    if (ok) toast.add({ severity: 'success', summary: 'Role changed', detail: `${member.name} is now ${ROLE_LABELS[role]}.`, life: 3000 })
  }

  function remove(member: Member): void {
    const self = member.userId === session.user?.id
    confirm.require({
      header: self ? 'Leave this project?' : `Remove ${member.name}?`,
      message: self
        ? 'You lose access to this project at once. An owner can add you again.'
        : `${member.name} (${member.email}) loses access to this project at once. Their markers and comments stay.`,
      acceptProps: { label: self ? 'Leave project' : 'Remove', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Cancel', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: async () => {
        const ok = await run({ userId: member.userId }, () => removeMember.mutateAsync(member.userId))
        if (!ok) return
        toast.add({ severity: 'success', summary: self ? 'You left the project' : `${member.name} removed`, life: 3000 })
        if (self) await router.replace('/projects')
      },
    })
  }

  return { pending, setRole, remove }
}
