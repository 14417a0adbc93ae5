import type { LocationQueryValue } from 'vue-router'

const AUTH_PAGES = ['/sign-in', '/sign-up', '/forgot-password', '/reset-password']

/**
 * The path to return to after signing in, or null. Only same-site paths: one leading '/', not '//'
 * or '/\' (both read as another host by browsers), no control characters, and not an auth page.
 */
export function safeRedirect(value: LocationQueryValue | LocationQueryValue[] | undefined): string | null {
  const raw = Array.isArray(value) ? value[0] : value
  if (typeof raw !== 'string' || raw.length > 2000) return null
  if (!raw.startsWith('/') || raw.startsWith('//') || raw.startsWith('/\\')) return null
  // eslint-disable-next-line no-control-regex
  if (/[\u0000-\u001f\u007f]/.test(raw)) return null
  const path = raw.split(/[?#]/, 1)[0] ?? ''
  if (AUTH_PAGES.includes(path)) return null
  return raw
}

/** The address an invitation page handed on (vue-router history state, so it never shows in the URL). */
export function invitedEmail(): string {
  const email = (window.history.state as { email?: unknown } | null)?.email
  return typeof email === 'string' ? email : ''
}
