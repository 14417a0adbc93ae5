import { LinkToken } from '@shared/schemas'

/**
 * Takes a one-time token from the address's fragment (`#token=...`) and removes it from the address bar
 * and history at once, so it is not left in the URL (it never reached a server log, being in the fragment).
 * Returns null when the address carries no well-formed token.
 */
export function takeFragmentToken(): string | null {
  const raw = new URLSearchParams(window.location.hash.replace(/^#/, '')).get('token')
  if (window.location.hash) {
    // Keep the router's history.state: vue-router keeps its position in it.
    window.history.replaceState(window.history.state, '', window.location.pathname + window.location.search)
  }
  return raw !== null && LinkToken.safeParse(raw).success ? raw : null
}
