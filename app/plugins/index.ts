import type { App } from 'vue'
import { createPinia } from 'pinia'
import { router } from '@/router'
import { useSessionStore } from '@/stores/session'
import { installPrimeVue } from './primevue'
import { installQuery, setSignedOutHandler } from './query'

/** Order matters: Pinia before the router (its guard reads the session), PrimeVue's toast before the query client. */
export function installPlugins(app: App): void {
  const pinia = createPinia()
  app.use(pinia)
  installPrimeVue(app)
  installQuery(app)

  setSignedOutHandler(() => {
    const session = useSessionStore(pinia)
    if (session.isGuest) {
      // The pass was revoked or has expired: the page says so instead of a sign-in form.
      session.setGuest(null)
      void router.replace({ path: '/passes/open', query: { ended: '1' } })
      return
    }
    if (!session.signedIn) return
    session.setUser(null)
    const current = router.currentRoute.value
    if (current.meta.public) return
    app.config.globalProperties.$toast.add({
      severity: 'info',
      summary: 'Signed out',
      detail: 'Your session has ended. Sign in again to carry on.',
      life: 7000,
    })
    void router.replace({ path: '/sign-in', query: { redirect: current.fullPath } })
  })

  app.use(router)
}
