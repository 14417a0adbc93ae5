import { NodePostgresAdapter } from '@lucia-auth/adapter-postgresql'
import { Lucia, TimeSpan } from 'lucia'
import type pg from 'pg'
import { HashedSessionAdapter } from './hashedSessions'

export const SESSION_COOKIE = 'spanmark_session'

export function createLucia(pool: pg.Pool, secureCookies: boolean) {
  return new Lucia(new HashedSessionAdapter(new NodePostgresAdapter(pool, { user: 'users', session: 'sessions' })), {
    sessionExpiresIn: new TimeSpan(30, 'd'),
    sessionCookie: { name: SESSION_COOKIE, attributes: { secure: secureCookies, sameSite: 'lax' } },
    // The adapter selects every user column; only these leave the server.
    getUserAttributes: (a) => ({ email: a.email, name: a.name, createdAt: a.created_at, emailConfirmed: a.email_confirmed_at !== null }),
  })
}

export type Auth = ReturnType<typeof createLucia>

declare module 'lucia' {
  interface Register {
    Lucia: Auth
    DatabaseUserAttributes: { email: string; name: string; created_at: Date; email_confirmed_at: Date | null }
  }
}
