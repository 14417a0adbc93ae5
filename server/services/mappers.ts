import type { CommentSummary, GuestSession, Instance, Invite, Marker, MarkerReview, Member, Pass, Project, Scan, SceneSummary, UploadToken, User } from '@shared/schemas'
import type { InviteWithPeopleRow } from '../repositories/invites'
import type { PassWithPeopleRow } from '../repositories/passes'
import type { AuthUser } from '../types'
import type { UserRow } from '../db/schema'
import type { MemberRow } from '../repositories/memberships'
import type { ProjectWithRoleRow } from '../repositories/projects'
import type { ScanWithUploaderRow } from '../repositories/scans'
import type { InstanceRow, SceneRow } from '../repositories/scenes'
import type { MarkerWithPeopleRow, StoredAnchor } from '../repositories/markers'
import { transformPoint } from '@shared/geometry/rigidTransform'
import { blankCheck, Check } from '@shared/schemas'
import type { UploadTokenWithCreatorRow } from '../repositories/uploadTokens'

/** Database rows (snake_case) to API objects (camelCase): the only place the two spellings meet. */
export function toUser(row: UserRow | AuthUser): User {
  if ('password_hash' in row) return { id: row.id, email: row.email, name: row.name, createdAt: row.created_at.toISOString(), emailConfirmed: row.email_confirmed_at !== null }
  return { id: row.id, email: row.email, name: row.name, createdAt: new Date(row.createdAt).toISOString(), emailConfirmed: row.emailConfirmed }
}

export function toProject(row: ProjectWithRoleRow): Project {
  return {
    id: row.id,
    name: row.name,
    description: row.description,
    role: row.role,
    memberCount: Number(row.member_count ?? 0),
    markerSettings: { anchorTolerance: row.anchor_tolerance, requiredMargin: row.required_margin },
    uploadSettings: { dailyUploadBytes: Number(row.daily_upload_bytes), maxScanPoints: Number(row.max_scan_points) },
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

export function toMember(row: MemberRow): Member {
  return { userId: row.user_id, name: row.name, email: row.email, role: row.role, joinedAt: row.created_at.toISOString() }
}

export function toScan(row: ScanWithUploaderRow): Scan {
  const has = row.min_x !== null && row.max_x !== null
  const attributes = row.attributes ?? {}
  const station = row.station as Scan['station']
  const perPoint = Boolean(attributes.perPointUncertainty)
  return {
    id: row.id,
    projectId: row.project_id,
    name: row.name,
    fileName: row.file_name,
    format: (row.format as Scan['format']) ?? null,
    status: row.status,
    progress: row.progress,
    stage: row.stage,
    error: row.error,
    sizeBytes: Number(row.size_bytes),
    pointCount: row.point_count === null ? null : Number(row.point_count),
    bounds: has ? { min: [row.min_x!, row.min_y!, row.min_z!], max: [row.max_x!, row.max_y!, row.max_z!] } : null,
    spacing: row.spacing,
    pointUncertainty: row.entered_uncertainty ?? row.estimated_uncertainty,
    estimatedUncertainty: row.estimated_uncertainty,
    enteredUncertainty: row.entered_uncertainty,
    uncertaintySource: row.entered_uncertainty !== null ? 'entered' : perPoint ? 'per-point' : row.estimated_uncertainty !== null ? 'estimated' : null,
    attributes: { color: Boolean(attributes.color), intensity: Boolean(attributes.intensity), perPointUncertainty: perPoint },
    dropped: row.dropped ?? {},
    station: station ?? null,
    // A rig key's upload names the key (its maker is the uploader of record in the database).
    uploadedBy: row.token_label ? `rig key "${row.token_label}"` : row.uploader_name,
    createdAt: row.created_at.toISOString(),
    readyAt: row.ready_at?.toISOString() ?? null,
  }
}

export function toUploadToken(row: UploadTokenWithCreatorRow): UploadToken {
  return {
    id: row.id,
    label: row.label,
    hint: row.token_hint,
    createdBy: row.creator_name,
    createdAt: row.created_at.toISOString(),
    lastUsedAt: row.last_used_at?.toISOString() ?? null,
    revokedAt: row.revoked_at?.toISOString() ?? null,
    expiresAt: row.expires_at.toISOString(),
    makerLeft: !row.maker_is_member,
  }
}

export function toSceneSummary(row: SceneRow): SceneSummary {
  return {
    id: row.id,
    projectId: row.project_id,
    name: row.name,
    instanceCount: Number(row.instance_count ?? 0),
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

export function toInstance(row: InstanceRow): Instance {
  return {
    id: row.id,
    sceneId: row.scene_id,
    scanId: row.scan_id,
    scanName: row.scan_name,
    matrix: row.matrix.map(Number),
    visible: row.visible,
    color: row.color,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

/** Anchors go out in the scene frame, with each placement's current transform; a removed placement's stay as stored. */
export function toMarker(row: MarkerWithPeopleRow, placements: ReadonlyMap<string, number[]>): Marker {
  const anchors = (row.anchors as StoredAnchor[]).map((a) => {
    const m = placements.get(a.instanceId)
    if (!m) return { ...a }
    const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
  return {
    id: row.id,
    sceneId: row.scene_id,
    kind: row.kind,
    label: row.label,
    anchors,
    params: row.params as Record<string, unknown>,
    revision: row.revision,
    check: parseStoredCheck(row.check, row.check_state, row.revision),
    createdBy: row.created_by && row.created_by_name ? { id: row.created_by, name: row.created_by_name } : null,
    updatedBy: row.updated_by && row.updated_by_name ? { id: row.updated_by, name: row.updated_by_name } : null,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
    review: reviewOf(row),
    comments: commentSummaryOf(row),
  }
}

export function reviewOf(row: MarkerWithPeopleRow): MarkerReview {
  return {
    state: row.review_state,
    by: row.review_by && row.review_by_name ? { id: row.review_by, name: row.review_by_name } : null,
    at: row.review_at?.toISOString() ?? null,
    note: row.review_note,
  }
}

export function commentSummaryOf(row: MarkerWithPeopleRow): CommentSummary {
  const last = row.comment_last_at as Date | string | null
  return {
    threads: Number(row.comment_threads ?? 0),
    open: Number(row.comment_open ?? 0),
    count: Number(row.comment_count ?? 0),
    lastAt: last === null ? null : new Date(last).toISOString(),
  }
}

/** A stored check as the API shows it; a marker never checked yet gets a pending check. */
export function parseStoredCheck(stored: unknown, state: string, revision: number): Check {
  const parsed = Check.safeParse(stored)
  if (parsed.success && parsed.data.basedOn === revision && state !== 'pending') return parsed.data
  const pending = blankCheck('pending', revision)
  // While a re-check runs, the last result is kept for reading, marked pending.
  return parsed.success ? { ...parsed.data, state: 'pending', basedOn: parsed.data.basedOn } : pending
}

export function toInvite(row: InviteWithPeopleRow): Invite {
  return {
    id: row.id,
    projectId: row.project_id,
    email: row.email,
    role: row.role,
    status: row.expires_at > new Date() ? 'pending' : 'expired',
    invitedBy: row.inviter_name,
    createdAt: row.created_at.toISOString(),
    lastSentAt: row.last_sent_at.toISOString(),
    expiresAt: row.expires_at.toISOString(),
  }
}

export function toPass(row: PassWithPeopleRow): Pass {
  const state = row.revoked_at ? 'revoked' : row.expires_at <= new Date() ? 'expired' : row.opened_at ? 'open' : 'not-opened'
  return {
    id: row.id,
    projectId: row.project_id,
    email: row.email,
    name: row.name,
    state,
    createdBy: row.creator_name,
    createdAt: row.created_at.toISOString(),
    expiresAt: row.expires_at.toISOString(),
    openedAt: row.opened_at?.toISOString() ?? null,
    lastUsedAt: row.last_used_at?.toISOString() ?? null,
    revokedAt: row.revoked_at?.toISOString() ?? null,
    allowDownload: row.allow_download,
  }
}

export function toGuestSession(row: PassWithPeopleRow): GuestSession {
  return { passId: row.id, projectId: row.project_id, projectName: row.project_name, name: row.name, expiresAt: row.expires_at.toISOString(), allowDownload: row.allow_download }
}
