import { sql } from 'kysely'
import type { DevMailMessage } from '@shared/schemas'
import { clearDevMail, listDevMail } from '../repositories/mail'
import { defineRoute, type RouteDef } from './registry'

export const VERSION = '0.1.0'

const LINK = /https?:\/\/[^\s<>"')\]]+/g

export const systemRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/health',
    access: { kind: 'public' },
    handler: async ({ services }) => {
      const up = await sql`select 1`.execute(services.db).then(() => true, () => false)
      return { status: up ? 200 : 503, body: { status: up ? 'ok' : 'degraded', database: up ? 'up' : 'down', version: VERSION } }
    },
  }),
  defineRoute({
    method: 'get',
    path: '/dev/mail',
    access: { kind: 'dev' },
    handler: async ({ services }) => {
      const rows = await listDevMail(services.db)
      const messages: DevMailMessage[] = rows.map((r) => ({
        id: r.id,
        from: r.from_address,
        to: r.to_addresses,
        subject: r.subject,
        text: r.text_body,
        html: r.html_body,
        links: [...new Set(r.text_body.match(LINK) ?? [])],
        receivedAt: r.received_at.toISOString(),
      }))
      return { body: { messages } }
    },
  }),
  defineRoute({
    method: 'delete',
    path: '/dev/mail',
    access: { kind: 'dev' },
    handler: async ({ services }) => {
      await clearDevMail(services.db)
    },
  }),
]
