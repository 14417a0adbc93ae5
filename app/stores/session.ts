import { computed, ref } from 'vue'
import { defineStore } from 'pinia'
import type { GuestSession, SessionInfo, SignInBody, SignUpAccepted, SignUpBody, User } from '@shared/schemas'
import * as authApi from '@/api/auth'
import { getSession } from '@/api/session'
import { queryClient } from '@/plugins/query'

/**
 * Who this browser is: a signed-in person, a guest holding a viewing pass (no account, one project,
 * read-only), or nobody. The one piece of client state; everything else from the server lives in the query cache.
 */
export const useSessionStore = defineStore('session', () => {
  const user = ref<User | null>(null)
  const guest = ref<GuestSession | null>(null)
  const loaded = ref(false)
  let loading: Promise<void> | null = null

  const signedIn = computed(() => user.value !== null)
  /** A viewing pass and no account: the page shows one project, read-only. */
  const isGuest = computed(() => user.value === null && guest.value !== null)
  /** Where the logo and "back" lead: the guest's one project, else the projects list. */
  const homePath = computed(() => (isGuest.value ? `/projects/${guest.value!.projectId}` : '/projects'))

  function setSession(next: SessionInfo): void {
    // Another person's cached projects must never show: drop the cache whenever who-is-here changes.
    if (next.user?.id !== user.value?.id || next.guest?.passId !== guest.value?.passId) queryClient.clear()
    user.value = next.user
    guest.value = next.guest
    loaded.value = true
  }

  function setUser(next: User | null): void {
    setSession({ user: next, guest: guest.value })
  }

  function setGuest(next: GuestSession | null): void {
    setSession({ user: user.value, guest: next })
  }

  /** Loads the session once (GET /api/session). A failed load is retried on the next call. */
  function load(): Promise<void> {
    if (loaded.value) return Promise.resolve()
    loading ??= getSession()
      .then((info) => setSession(info))
      .finally(() => {
        loading = null
      })
    return loading
  }

  async function signIn(body: SignInBody): Promise<User> {
    const me = await authApi.signIn(body)
    setUser(me)
    return me
  }

  /** Signs nobody in: the account is made (or its owner told) and the confirmation link is in the mailbox. */
  function signUp(body: SignUpBody): Promise<SignUpAccepted> {
    return authApi.signUp(body)
  }

  /** Signs out, and ends a viewing pass held in this browser too (the server clears both cookies). */
  async function signOut(): Promise<void> {
    try {
      await authApi.signOut()
    } finally {
      setSession({ user: null, guest: null })
    }
  }

  return { user, guest, loaded, signedIn, isGuest, homePath, setUser, setGuest, load, signIn, signUp, signOut }
})
