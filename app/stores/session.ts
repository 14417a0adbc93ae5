import { computed, ref } from 'vue'
import { defineStore } from 'pinia'
import type { SignInBody, SignUpBody, User } from '@shared/schemas'
import * as authApi from '@/api/auth'
import { getMe } from '@/api/me'
import { queryClient } from '@/plugins/query'

/** Who is signed in. The one piece of client state; everything else from the server lives in the query cache. */
export const useSessionStore = defineStore('session', () => {
  const user = ref<User | null>(null)
  const loaded = ref(false)
  let loading: Promise<void> | null = null

  const signedIn = computed(() => user.value !== null)

  function setUser(next: User | null): void {
    // Another person's cached projects must never show: drop the cache whenever the user changes.
    if (next?.id !== user.value?.id) queryClient.clear()
    user.value = next
    loaded.value = true
  }

  /** Loads the session once (GET /api/me; 401 means signed out). A failed load is retried on the next call. */
  function load(): Promise<void> {
    if (loaded.value) return Promise.resolve()
    loading ??= getMe()
      .then((me) => setUser(me))
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

  async function signUp(body: SignUpBody): Promise<User> {
    const me = await authApi.signUp(body)
    setUser(me)
    return me
  }

  async function signOut(): Promise<void> {
    try {
      await authApi.signOut()
    } finally {
      setUser(null)
    }
  }

  return { user, loaded, signedIn, setUser, load, signIn, signUp, signOut }
})
