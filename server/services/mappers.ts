import type { Member, Project, User } from '@shared/schemas'
import type { AuthUser } from '../types'
import type { UserRow } from '../db/schema'
import type { MemberRow } from '../repositories/memberships'
import type { ProjectWithRoleRow } from '../repositories/projects'

/** Database rows (snake_case) to API objects (camelCase): the only place the two spellings meet. */
export function toUser(row: UserRow | AuthUser): User {
  if ('password_hash' in row) return { id: row.id, email: row.email, name: row.name, createdAt: row.created_at.toISOString() }
  return { id: row.id, email: row.email, name: row.name, createdAt: new Date(row.createdAt).toISOString() }
}

export function toProject(row: ProjectWithRoleRow): Project {
  return {
    id: row.id,
    name: row.name,
    description: row.description,
    role: row.role,
    memberCount: Number(row.member_count ?? 0),
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

export function toMember(row: MemberRow): Member {
  return { userId: row.user_id, name: row.name, email: row.email, role: row.role, joinedAt: row.created_at.toISOString() }
}
