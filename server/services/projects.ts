import type { Member, Project, ProjectCreateBody, ProjectUpdateBody } from '@shared/schemas'
import type { Role } from '@shared/auth/roles'
import { HttpError } from '../errors'
import type { Conn } from '../db'
import { countOwners, deleteMembership, findMember, insertMembership, listMembers, updateMembershipRole } from '../repositories/memberships'
import { deleteProject, findProjectForUser, findProjectWithCount, insertProject, listProjectsForUser, lockProject, updateProject } from '../repositories/projects'
import { findUserByEmail } from '../repositories/users'
import type { Services } from '../types'
import { toMember, toProject } from './mappers'
import { settingsChanged } from './markers'

export async function listProjects(s: Services, userId: string): Promise<Project[]> {
  return (await listProjectsForUser(s.db, userId)).map(toProject)
}

export async function getProject(db: Conn, projectId: string, userId: string): Promise<Project> {
  const row = await findProjectForUser(db, projectId, userId)
  if (!row) throw HttpError.notFound('No such project, or you are not a member of it.')
  return toProject(row)
}

/** The project as a caller with `role` sees it (the route has decided the role: a member's, or a pass's guest). */
export async function getProjectAs(db: Conn, projectId: string, role: Role): Promise<Project> {
  const row = await findProjectWithCount(db, projectId)
  if (!row) throw HttpError.notFound('No such project, or you are not a member of it.')
  return toProject({ ...row, role })
}

/** The person who creates a project owns it. */
export async function createProject(s: Services, userId: string, body: ProjectCreateBody): Promise<Project> {
  return s.db.transaction().execute(async (tx) => {
    const { id } = await insertProject(tx, { name: body.name, description: body.description, createdBy: userId })
    await insertMembership(tx, id, userId, 'owner')
    return getProject(tx, id, userId)
  })
}

export async function renameProject(s: Services, projectId: string, userId: string, body: ProjectUpdateBody): Promise<Project> {
  await updateProject(s.db, projectId, body)
  if (body.anchorTolerance !== undefined || body.requiredMargin !== undefined) await settingsChanged(s, projectId)
  return getProject(s.db, projectId, userId)
}

export async function removeProject(s: Services, projectId: string): Promise<void> {
  await deleteProject(s.db, projectId)
  s.live.projectDeleted(projectId)
}

/** The project's members; a guest (a viewing pass) sees their names and roles, not their e-mail addresses. */
export async function members(s: Services, projectId: string, asRole: Role): Promise<Member[]> {
  const list = (await listMembers(s.db, projectId)).map(toMember)
  return asRole === 'guest' ? list.map((m) => ({ ...m, email: null })) : list
}

/**
 * Role changes and removals are serialised per project (a row lock), so two owners demoting each other
 * at once cannot leave a project with no owner.
 */
async function changeMembership(s: Services, projectId: string, userId: string, role: Role | null): Promise<Member | null> {
  return s.db.transaction().execute(async (tx) => {
    await lockProject(tx, projectId)
    const current = await findMember(tx, projectId, userId)
    if (!current) throw HttpError.notFound('That person is not a member of this project.')
    if (current.role === 'owner' && role !== 'owner' && (await countOwners(tx, projectId)) <= 1) {
      throw HttpError.conflict('A project needs at least one owner: make someone else owner first.', 'role')
    }
    if (role === null) {
      await deleteMembership(tx, projectId, userId)
      return null
    }
    await updateMembershipRole(tx, projectId, userId, role)
    return toMember((await findMember(tx, projectId, userId))!)
  })
}

/** A new role holds on open sockets too: theirs close with "role changed" and reconnect with it. */
export async function setMemberRole(s: Services, projectId: string, userId: string, role: Role): Promise<Member> {
  const member = (await changeMembership(s, projectId, userId, role))!
  s.live.membershipChanged(projectId, userId, role)
  return member
}

/** Removed (or leaving): their open sockets on the project's scenes close at once. */
export async function removeMember(s: Services, projectId: string, userId: string): Promise<void> {
  await changeMembership(s, projectId, userId, null)
  s.live.membershipChanged(projectId, userId, null)
}
