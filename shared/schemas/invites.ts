import { z } from 'zod'
import { Email, Id, Timestamp } from './common'
import { RoleSchema } from './projects'

/** The roles an invitation may carry: owners are made by an owner from the members table, guests get a viewing pass. */
export const INVITE_ROLES = ['measurer', 'mentor'] as const
export type InviteRole = (typeof INVITE_ROLES)[number]
export const InviteRoleSchema = z.enum(INVITE_ROLES, { error: `must be one of ${INVITE_ROLES.join(', ')}` })

/** How long an invitation link works, from when it was (last) sent. */
export const INVITE_TTL_DAYS = 7

export const InviteCreateBody = z.object({ email: Email, role: InviteRoleSchema })
export type InviteCreateBody = z.infer<typeof InviteCreateBody>

export const InviteParams = z.object({ inviteId: Id })

/** One-time secrets as e-mailed (32 random bytes, base64url). They travel in request bodies, never in a URL. */
export const LinkToken = z.string({ error: 'must be text' }).regex(/^[A-Za-z0-9_-]{20,100}$/, { error: 'is not a link token' })
export const TokenBody = z.object({ token: LinkToken })
export type TokenBody = z.infer<typeof TokenBody>

/** A pending invitation as its project's owners see it; `expired` ones can be sent again. */
export const Invite = z.object({
  id: Id,
  projectId: Id,
  email: z.string(),
  role: InviteRoleSchema,
  status: z.enum(['pending', 'expired']),
  invitedBy: z.string().nullable(),
  createdAt: Timestamp,
  lastSentAt: Timestamp,
  expiresAt: Timestamp,
})
export type Invite = z.infer<typeof Invite>
export const InviteList = z.object({ invites: z.array(Invite) })
export const InviteResponse = z.object({ invite: Invite })

/** What the invited person's page shows before they join (the token is the proof). */
export const InviteLookup = z.object({
  invite: z.object({
    email: z.string(),
    role: InviteRoleSchema,
    projectName: z.string(),
    invitedBy: z.string().nullable(),
    expiresAt: Timestamp,
  }),
  /** Whether an account uses the invited address already: sign in, else sign up. */
  accountExists: z.boolean(),
})
export type InviteLookup = z.infer<typeof InviteLookup>

/** The role held after joining (someone added by hand meanwhile keeps theirs). */
export const InviteAccepted = z.object({ projectId: Id, role: RoleSchema })
export type InviteAccepted = z.infer<typeof InviteAccepted>
