import { can, type Right } from '@shared/auth/roles'
import type { Conn } from '../db'
import { HttpError } from '../errors'
import { findMembership } from '../repositories/memberships'
import type { Membership } from '../routes/registry'

/**
 * The one place that decides whether a signed-in person may do something in a project. Routes whose
 * path names another resource (a scan, a scene, a marker) add a resolver here that finds its project.
 */
const projectOf: Record<string, (db: Conn, id: string) => Promise<string | null>> = {
  projectId: async (_db, id) => id,
}

export const SCOPE_PARAMS = Object.keys(projectOf)

export async function projectIdFromParams(db: Conn, params: Record<string, unknown>): Promise<string | null> {
  for (const [name, resolve] of Object.entries(projectOf)) {
    const value = params[name]
    if (typeof value === 'string') return resolve(db, value)
  }
  throw new Error(`a project route needs one of these path parameters: ${SCOPE_PARAMS.join(', ')}`)
}

export async function authorize(db: Conn, userId: string, params: Record<string, unknown>, right: Right): Promise<Membership> {
  const projectId = await projectIdFromParams(db, params)
  const membership = projectId ? await findMembership(db, projectId, userId) : undefined
  // Not a member: the same answer as a project that does not exist, so ids reveal nothing.
  if (!projectId || !membership) throw HttpError.notFound('No such project, or you are not a member of it.')
  if (!can(membership.role, right)) {
    throw HttpError.forbidden(`Your role in this project (${membership.role}) does not allow this.`)
  }
  return { projectId, role: membership.role }
}
