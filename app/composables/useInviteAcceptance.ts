import { computed, ref } from 'vue'
import { useRouter } from 'vue-router'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import { useToast } from 'primevue/usetoast'
import { ROLE_LABELS } from '@shared/auth/roles'
import { acceptInvite, lookupInvite } from '@/api/invites'
import { useSessionStore } from '@/stores/session'
import { takeFragmentToken } from '@/lib/fragmentToken'
import { queryKeys } from './queryKeys'

/** The tab keeps the token while its person signs up or signs in and comes back (never in a URL). */
export const KEPT_INVITE_TOKEN = 'spanmark.invite-token'
const KEPT = KEPT_INVITE_TOKEN

/**
 * The invitation page: the token from the link's fragment (kept for this tab), what it invites to, and the
 * way in: sign up or sign in with the invited address (and back here), then join.
 */
export function useInviteAcceptance() {
  const fromLink = takeFragmentToken()
  if (fromLink) sessionStorage.setItem(KEPT, fromLink)
  const token = ref(fromLink ?? sessionStorage.getItem(KEPT))
  const session = useSessionStore()
  const router = useRouter()
  const toast = useToast()
  const client = useQueryClient()

  const lookup = useQuery({
    queryKey: queryKeys.inviteLookup(),
    queryFn: () => lookupInvite(token.value!),
    enabled: computed(() => token.value !== null),
    retry: false,
    gcTime: 0,
    meta: { inlineErrors: true },
  })
  const invite = computed(() => lookup.data.value?.invite ?? null)
  /** Signed in with the address the invitation was sent to. */
  const rightAccount = computed(() => session.user !== null && invite.value !== null && session.user.email === invite.value.email)

  const join = useMutation({
    mutationFn: () => acceptInvite(token.value!),
    onSuccess: async (joined) => {
      sessionStorage.removeItem(KEPT)
      toast.add({ severity: 'success', summary: 'You joined the project', detail: `as ${ROLE_LABELS[joined.role]}.`, life: 5000 })
      await client.invalidateQueries({ queryKey: queryKeys.projects() })
      await router.replace(`/projects/${joined.projectId}`)
    },
    meta: { inlineErrors: true },
  })

  /** To sign-up or sign-in and back here; the invited address fills the form (through history state, not the URL). */
  function goTo(page: 'sign-in' | 'sign-up'): void {
    void router.push({ path: `/${page}`, query: { redirect: '/invites/accept' }, state: { email: invite.value?.email ?? '' } })
  }

  async function switchAccount(): Promise<void> {
    await session.signOut().catch(() => undefined)
  }

  return { token, lookup, invite, rightAccount, join, goTo, switchAccount }
}
