import { z } from 'zod'
import { Id, Timestamp } from './common'

/** A message caught by the local fake SMTP server (development and tests only). */
export const DevMailMessage = z.object({
  id: Id,
  from: z.string(),
  to: z.array(z.string()),
  subject: z.string(),
  text: z.string(),
  html: z.string().nullable(),
  links: z.array(z.string()),
  receivedAt: Timestamp,
})
export type DevMailMessage = z.infer<typeof DevMailMessage>
export const DevMailList = z.object({ messages: z.array(DevMailMessage) })
