import { Cookie } from 'lucia'

/**
 * The guest session of a viewing pass: its own cookie (not lucia's), HttpOnly and SameSite=Lax, scoped to
 * the pass's project by the server (the pass row names it). Its value is a random secret; the database
 * keeps only its SHA-256 (guest_links.session_hash).
 */
export const GUEST_COOKIE = 'spanmark_pass'

export function guestCookie(value: string, expiresAt: Date, secure: boolean): string {
  return new Cookie(GUEST_COOKIE, value, { httpOnly: true, sameSite: 'lax', secure, path: '/', expires: expiresAt }).serialize()
}

export function blankGuestCookie(secure: boolean): string {
  return new Cookie(GUEST_COOKIE, '', { httpOnly: true, sameSite: 'lax', secure, path: '/', maxAge: 0 }).serialize()
}

/** The value of one cookie in a Cookie header, or null. */
export function readCookie(header: string | undefined, name: string): string | null {
  for (const part of (header ?? '').split(';')) {
    const eq = part.indexOf('=')
    if (eq < 0 || part.slice(0, eq).trim() !== name) continue
    try {
      return decodeURIComponent(part.slice(eq + 1).trim()) || null
    } catch {
      return null
    }
  }
  return null
}
