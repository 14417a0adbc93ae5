import { z } from 'zod'
import { Email, Id, PersonName, Timestamp } from './common'

/** Viewing passes (guest links in code): a guest with no account sees one project, read-only. */
export const PASS_DAYS = { min: 1, max: 90, default: 14 } as const

export const PassCreateBody = z.object({
  email: Email,
  /** Who the pass is for, as the project's people and the guest's own page show it. */
  name: PersonName,
  days: z
    .number({ error: 'must be a whole number of days' })
    .int({ error: 'must be a whole number of days' })
    .min(PASS_DAYS.min, { error: `must be at least ${PASS_DAYS.min} day` })
    .max(PASS_DAYS.max, { error: `must be at most ${PASS_DAYS.max} days` })
    .default(PASS_DAYS.default),
  /** The guest may also download the original scan files (off unless the owner asks for it). */
  allowDownload: z.boolean({ error: 'must be true or false' }).default(false),
})
export type PassCreateBody = z.infer<typeof PassCreateBody>

export const PassParams = z.object({ passId: Id })

export const PASS_STATES = ['not-opened', 'open', 'expired', 'revoked'] as const
export type PassState = (typeof PASS_STATES)[number]

export const Pass = z.object({
  id: Id,
  projectId: Id,
  email: z.string(),
  name: z.string(),
  state: z.enum(PASS_STATES),
  createdBy: z.string().nullable(),
  createdAt: Timestamp,
  expiresAt: Timestamp,
  openedAt: Timestamp.nullable(),
  lastUsedAt: Timestamp.nullable(),
  revokedAt: Timestamp.nullable(),
  allowDownload: z.boolean().default(false),
})
export type Pass = z.infer<typeof Pass>
export const PassList = z.object({ passes: z.array(Pass) })
export const PassResponse = z.object({ pass: Pass })

/** The guest behind a guest session cookie: one pass, one project. */
export const GuestSession = z.object({
  passId: Id,
  projectId: Id,
  projectName: z.string(),
  name: z.string(),
  expiresAt: Timestamp,
  /** Whether this pass may download original scan files. */
  allowDownload: z.boolean().default(false),
})
export type GuestSession = z.infer<typeof GuestSession>
export const PassOpened = z.object({ guest: GuestSession })
