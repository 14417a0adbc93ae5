import { z } from 'zod'
import { MEMBER_ROLES, ROLES } from '../auth/roles'
import { Email, Id, Timestamp } from './common'
import { MARGIN_LIMITS, MarkerSettings, TOLERANCE_LIMITS } from './markers'

export const RoleSchema = z.enum(ROLES, { error: `must be one of ${ROLES.join(', ')}` })
/** The roles an owner can give a member; guests come in with a viewing pass instead. */
export const MemberRoleSchema = z.enum(MEMBER_ROLES, { error: `must be one of ${MEMBER_ROLES.join(', ')} (guests get a viewing pass)` })

const ProjectName = z
  .string({ error: 'must be text' })
  .trim()
  .min(1, { error: 'must not be empty' })
  .max(120, { error: 'must be at most 120 characters' })
const ProjectDescription = z.string({ error: 'must be text' }).trim().max(2000, { error: 'must be at most 2000 characters' })

export const ProjectCreateBody = z.object({ name: ProjectName, description: ProjectDescription.default('') })
export type ProjectCreateBody = z.infer<typeof ProjectCreateBody>

const AnchorTolerance = z
  .number({ error: 'must be a number (metres) or null for the default' })
  .min(TOLERANCE_LIMITS.min, { error: `must be at least ${TOLERANCE_LIMITS.min} m` })
  .max(TOLERANCE_LIMITS.max, { error: `must be at most ${TOLERANCE_LIMITS.max} m` })
  .nullable()
const RequiredMargin = z
  .number({ error: 'must be a number (metres)' })
  .min(MARGIN_LIMITS.min, { error: 'must not be negative' })
  .max(MARGIN_LIMITS.max, { error: `must be at most ${MARGIN_LIMITS.max} m` })

/** What a project may cost: its owner sets them (README, "Security and limits"). */
export const UPLOAD_LIMITS = {
  dailyBytes: { default: 200 * 1024 ** 3, min: 1024 ** 2, max: 100 * 1024 ** 4 },
  scanPoints: { default: 500_000_000, min: 1000, max: 2_000_000_000 },
} as const
const DailyUploadBytes = z
  .number({ error: 'must be a number of bytes' })
  .int({ error: 'must be a whole number of bytes' })
  .min(UPLOAD_LIMITS.dailyBytes.min, { error: 'must be at least 1 MiB' })
  .max(UPLOAD_LIMITS.dailyBytes.max, { error: 'must be at most 100 TiB' })
const MaxScanPoints = z
  .number({ error: 'must be a number of points' })
  .int({ error: 'must be a whole number of points' })
  .min(UPLOAD_LIMITS.scanPoints.min, { error: `must be at least ${UPLOAD_LIMITS.scanPoints.min} points` })
  .max(UPLOAD_LIMITS.scanPoints.max, { error: `must be at most ${UPLOAD_LIMITS.scanPoints.max} points` })

export const UploadSettings = z.object({
  /** Bytes the project may receive in any 24 hours. */
  dailyUploadBytes: z.number(),
  /** Points one scan of the project may hold; a file with more fails with a message on how to split it. */
  maxScanPoints: z.number(),
})
export type UploadSettings = z.infer<typeof UploadSettings>

export const ProjectUpdateBody = z
  .object({
    name: ProjectName,
    description: ProjectDescription,
    anchorTolerance: AnchorTolerance,
    requiredMargin: RequiredMargin,
    dailyUploadBytes: DailyUploadBytes,
    maxScanPoints: MaxScanPoints,
  })
  .partial()
  .refine((v) => Object.values(v).some((x) => x !== undefined), { error: 'give a name, description, anchor tolerance, required margin, daily upload quota or scan point limit to change' })
export type ProjectUpdateBody = z.infer<typeof ProjectUpdateBody>

export const ProjectParams = z.object({ projectId: Id })
export const MemberParams = z.object({ projectId: Id, userId: Id })

export const Project = z.object({
  id: Id,
  name: z.string(),
  description: z.string(),
  role: RoleSchema,
  memberCount: z.number().int(),
  markerSettings: MarkerSettings,
  uploadSettings: UploadSettings,
  createdAt: Timestamp,
  updatedAt: Timestamp,
})
export type Project = z.infer<typeof Project>

export const ProjectList = z.object({ projects: z.array(Project) })
export const ProjectResponse = z.object({ project: Project })

export const Member = z.object({
  userId: Id,
  name: z.string(),
  /** Null for a guest: a viewing pass shows who the team is, not how to reach them. */
  email: z.string().nullable(),
  role: RoleSchema,
  joinedAt: Timestamp,
})
export type Member = z.infer<typeof Member>
export const MemberList = z.object({ members: z.array(Member) })
export const MemberResponse = z.object({ member: Member })

/** Adds a person who already has an account; people without one are invited by e-mail. */
export const MemberUpdateBody = z.object({ role: MemberRoleSchema })
export type MemberUpdateBody = z.infer<typeof MemberUpdateBody>
