import { can, type Right } from '@shared/auth/roles'
import { hashSecret } from '../auth/tokens'
import type { Conn } from '../db'
import { HttpError } from '../errors'
import { findMembership } from '../repositories/memberships'
import { projectOfScan } from '../repositories/scans'
import { projectOfInstance, projectOfScene } from '../repositories/scenes'
import { projectOfCheckpoint } from '../repositories/checkpoints'
import { projectOfComment } from '../repositories/comments'
import { sceneOfMarkerId } from '../repositories/markers'
import { projectOfRegistration } from '../repositories/registrations'
import { projectOfUpload } from '../repositories/uploads'
import { projectOfUploadToken, findLiveUploadToken, markUploadTokenUsed } from '../repositories/uploadTokens'
import { projectOfInvite } from '../repositories/invites'
import { projectOfPass } from '../repositories/passes'
import { projectOfExport } from '../repositories/exports'
import { projectOfObject, projectOfTrim } from '../repositories/objects'
import type { Membership, RigKey } from '../routes/registry'
import type { Guest } from '../types'

/**
 * The one place that decides whether a caller may do something in a project. Routes whose path names
 * another resource (a scan, a rig key, a scene, a marker, ...) add a resolver here that finds its
 * project; the first parameter of the path found in this table decides.
 */
const projectOf: Record<string, (db: Conn, id: string) => Promise<string | null>> = {
  projectId: async (_db, id) => id,
  scanId: async (db, id) => (await projectOfScan(db, id))?.project_id ?? null,
  uploadId: async (db, id) => (await projectOfUpload(db, id))?.project_id ?? null,
  tokenId: async (db, id) => (await projectOfUploadToken(db, id))?.project_id ?? null,
  sceneId: async (db, id) => (await projectOfScene(db, id))?.project_id ?? null,
  instanceId: async (db, id) => (await projectOfInstance(db, id))?.project_id ?? null,
  // A deleted marker keeps its history: its project is found through the scene it was made in.
  markerId: async (db, id) => (await sceneOfMarkerId(db, id))?.project_id ?? null,
  checkpointId: async (db, id) => (await projectOfCheckpoint(db, id))?.project_id ?? null,
  inviteId: async (db, id) => (await projectOfInvite(db, id))?.project_id ?? null,
  passId: async (db, id) => (await projectOfPass(db, id))?.project_id ?? null,
  commentId: async (db, id) => (await projectOfComment(db, id))?.project_id ?? null,
  registrationId: async (db, id) => (await projectOfRegistration(db, id))?.project_id ?? null,
  exportId: async (db, id) => (await projectOfExport(db, id))?.project_id ?? null,
  objectId: async (db, id) => (await projectOfObject(db, id))?.project_id ?? null,
  trimId: async (db, id) => (await projectOfTrim(db, id))?.project_id ?? null,
}

export const SCOPE_PARAMS = Object.keys(projectOf)

export async function projectIdFromParams(db: Conn, params: Record<string, unknown>): Promise<string | null> {
  for (const [name, resolve] of Object.entries(projectOf)) {
    const value = params[name]
    if (typeof value === 'string') return resolve(db, value)
  }
  throw new Error(`a project route needs one of these path parameters: ${SCOPE_PARAMS.join(', ')}`)
}

const NOT_FOUND = 'No such project, or you are not a member of it.'

/** Who asks: a signed-in person, a guest holding a viewing pass, or (a member who opened a pass) both. */
export interface Caller {
  userId: string | null
  guest: Guest | null
}

/**
 * Membership decides first; a caller who is not a member but holds a viewing pass for this very project
 * acts as its guest. Anything else is 404, the same answer as a project that does not exist.
 */
export async function authorize(db: Conn, caller: Caller, params: Record<string, unknown>, right: Right): Promise<Membership> {
  const projectId = await projectIdFromParams(db, params)
  const membership = projectId && caller.userId ? await findMembership(db, projectId, caller.userId) : undefined
  const role = membership?.role ?? (projectId && caller.guest?.projectId === projectId ? 'guest' : null)
  // Not a member: the same answer as a project that does not exist, so ids reveal nothing.
  if (!projectId || !role) throw HttpError.notFound(NOT_FOUND)
  if (!can(role, right) && !passGrants(membership ? null : caller.guest, right)) {
    throw HttpError.forbidden(
      membership
        ? `Your role in this project (${role}) does not allow this.`
        : right === 'downloadOriginals'
          ? 'This viewing pass shows the scans but does not let you download their original files. Ask the project’s owner for a pass that allows downloads.'
          : 'A viewing pass only shows this project; it changes nothing.',
    )
  }
  return { projectId, role }
}

/** What a viewing pass adds to the guest role: downloading originals, when the owner allowed it on that pass. */
function passGrants(guest: Guest | null, right: Right): boolean {
  return guest !== null && right === 'downloadOriginals' && guest.allowDownload
}

/** Rig keys act as a measurer of their own project, for the routes that accept them (uploads). */
export async function authorizeRigKey(db: Conn, secret: string, params: Record<string, unknown>, right: Right): Promise<{ membership: Membership; rigKey: RigKey }> {
  const token = await findLiveUploadToken(db, hashSecret(secret))
  if (!token) throw HttpError.unauthenticated('This rig key is not valid, or it was revoked.')
  if (token.expired) throw HttpError.unauthenticated(`This rig key expired on ${token.expires_at.toISOString().slice(0, 10)}. Ask a project owner for a new key.`)
  if (!token.maker_is_member) throw HttpError.unauthenticated('This rig key stopped working: the person who made it is no longer a member of the project. Ask a project owner for a new key.')
  const projectId = await projectIdFromParams(db, params)
  if (projectId !== token.project_id) throw HttpError.notFound(NOT_FOUND)
  if (!can('measurer', right)) throw HttpError.forbidden('A rig key may only upload scans.')
  await markUploadTokenUsed(db, token.id)
  return { membership: { projectId, role: 'measurer' }, rigKey: { id: token.id, createdBy: token.created_by } }
}
