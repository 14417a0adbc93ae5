import { ref } from 'vue'
import { ResetConfirmBody } from '@shared/schemas'

/**
 * Takes the one-time token from `#token=...` and removes it from the address bar and history at once,
 * so it is not left in the URL (it never reached the server's logs, being in the fragment).
 * Returns null when the link carries no well-formed token.
 */
export function useResetToken() {
  const hash = new URLSearchParams(window.location.hash.replace(/^#/, ''))
  const raw = hash.get('token')
  if (window.location.hash) {
    // Keep the router's history.state: vue-router keeps its position in it.
    window.history.replaceState(window.history.state, '', window.location.pathname + window.location.search)
  }
  const valid = raw !== null && ResetConfirmBody.shape.token.safeParse(raw).success
  return ref(valid ? raw : null)
}
