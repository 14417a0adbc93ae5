import { invertRigid, transformPoint } from '@shared/geometry/rigidTransform'
import type { LiveMarker } from '@shared/collab/documents'
import { MarkerCreateBody, type Anchor, type Marker, type MarkerKind, type MarkerReviewBody, type MarkerRevision, type MarkerUpdateBody } from '@shared/schemas'
import { CHECK_STATE_LOOK } from '@shared/collab/states'
import { ErrorCode } from '@shared/schemas/common'
import { HttpError } from '../errors'
import * as repo from '../repositories/markers'
import * as revisions from '../repositories/markerRevisions'
import { listInstances, touchScene } from '../repositories/scenes'
import { latestAcceptedFits } from '../repositories/registrations'
import type { Services } from '../types'
import type { MarkerChecker } from '../markers/checker'
import { toMarker } from './mappers'

/**
 * Every marker write goes through here, whichever door it came in by (the API now, the live document
 * later): validation against the scene, scene frame to placement frame, the row, the check.
 */

type Placements = Map<string, number[]>

async function placementsOf(s: Services, sceneId: string): Promise<Placements> {
  return new Map((await listInstances(s.db, sceneId)).map((i) => [i.id, i.matrix]))
}

function invalid(field: string, message: string): HttpError {
  return new HttpError(400, ErrorCode.invalidInput, `body.${field}: ${message}`, field)
}

/** Placements, sections and objects named by the marker must be in its scene. */
async function validateReferences(s: Services, sceneId: string, body: MarkerCreateBody, placements: Placements, markerId?: string): Promise<void> {
  body.anchors.forEach((a, i) => {
    if (!placements.has(a.instanceId)) throw invalid(`anchors.${i}.instanceId`, 'no placement with this id in the scene.')
  })
  if (body.kind === 'section') {
    body.params.instanceIds?.forEach((id, i) => {
      if (!placements.has(id)) throw invalid(`params.instanceIds.${i}`, 'no placement with this id in the scene.')
    })
  }
  if (body.kind === 'clearance') {
    if (!placements.has(body.params.objectInstanceId)) throw invalid('params.objectInstanceId', 'no placement with this id in the scene.')
    const section = await repo.findMarker(s.db, body.params.sectionMarkerId)
    if (!section || section.scene_id !== sceneId || section.id === markerId) throw invalid('params.sectionMarkerId', 'no section marker with this id in the scene.')
    if (section.kind !== 'section') throw invalid('params.sectionMarkerId', `that marker is a ${section.kind}, not a section.`)
    if (!(section.params as { opening?: boolean }).opening) throw invalid('params.sectionMarkerId', 'that section does not look for a free opening; turn "find the free opening" on first.')
  }
}

function toLocal(anchors: Anchor[], placements: Placements): repo.StoredAnchor[] {
  return anchors.map((a) => {
    const [x, y, z] = transformPoint(invertRigid(placements.get(a.instanceId)!), a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
}

/** Same anchors within a nanometre (placement frame): an edit that moved nothing. */
function sameAnchors(a: readonly repo.StoredAnchor[], b: readonly repo.StoredAnchor[]): boolean {
  return a.length === b.length && a.every((p, i) => p.instanceId === b[i]!.instanceId && Math.hypot(p.x - b[i]!.x, p.y - b[i]!.y, p.z - b[i]!.z) < 1e-9)
}

function defaultLabel(kind: MarkerKind, n: number): string {
  return `${kind} ${n}`
}

function checker(s: Services): MarkerChecker {
  return s.markerChecks
}

/**
 * Markers set back to pending (a section they go through changed, their placement moved): checked again in
 * the background, and their record entries say "pending" at once, so every open page shows them checking.
 */
async function recheck(s: Services, sceneId: string, markers: { id: string; revision: number }[]): Promise<void> {
  // Pending first, then the checks: a check that finishes fast writes its entry after this one.
  for (const m of markers) await s.live.checkStored(sceneId, m.id)
  checker(s).schedule(markers)
}

async function present(s: Services, markerId: string): Promise<Marker> {
  const row = await repo.findMarker(s.db, markerId)
  if (!row) throw HttpError.notFound('No such marker.')
  return toMarker(row, await placementsOf(s, row.scene_id))
}

export async function markersOf(s: Services, sceneId: string): Promise<Marker[]> {
  const placements = await placementsOf(s, sceneId)
  return (await repo.listMarkers(s.db, sceneId)).map((row) => toMarker(row, placements))
}

export async function getMarker(s: Services, markerId: string): Promise<Marker> {
  return present(s, markerId)
}

/**
 * A scene holds at most `config.limits.markersPerScene` markers (every one is checked against the points and
 * drawn on every open page): a new one beyond it is refused with 409, saying the limit and what to do.
 */
async function ensureRoomForMarker(s: Services, sceneId: string): Promise<void> {
  const cap = s.config.limits.markersPerScene
  const n = await repo.countMarkersInScene(s.db, sceneId)
  if (n >= cap) throw HttpError.conflict(`This scene already holds ${n} markers, the most a scene may hold (${cap}). Delete markers that are no longer needed, or place the new ones in another scene.`)
}

export async function createMarker(s: Services, sceneId: string, body: MarkerCreateBody, userId: string | null): Promise<Marker> {
  await ensureRoomForMarker(s, sceneId)
  const placements = await placementsOf(s, sceneId)
  await validateReferences(s, sceneId, body, placements)
  const label = body.label ?? defaultLabel(body.kind, Number((await repo.countMarkersOfKind(s.db, sceneId, body.kind)).n) + 1)
  const { id } = await repo.insertMarker(s.db, { sceneId, kind: body.kind, label, anchors: toLocal(body.anchors, placements), params: body.params, userId })
  await touchScene(s.db, sceneId)
  await revisions.insertRevision(s.db, (await repo.findMarker(s.db, id))!, 'created', userId)
  await checker(s).checkNow(id)
  await s.live.markerChanged(sceneId, id)
  return present(s, id)
}

export async function updateMarker(s: Services, markerId: string, body: MarkerUpdateBody, userId: string | null, options: { action?: 'edited' | 'restored' } = {}): Promise<Marker> {
  const row = await repo.findMarker(s.db, markerId)
  if (!row) throw HttpError.notFound('No such marker.')
  const placements = await placementsOf(s, row.scene_id)
  const current = toMarker(row, placements)
  // The merged marker must be a valid marker of its kind (anchors in the scene frame, as the API takes them).
  const merged = MarkerCreateBody.safeParse({ kind: row.kind, label: body.label ?? row.label, anchors: body.anchors ?? current.anchors, params: body.params ?? row.params })
  if (!merged.success) {
    const issue = merged.error.issues[0]!
    const field = issue.path.join('.')
    throw invalid(field, issue.message)
  }
  const geometry = body.anchors !== undefined || body.params !== undefined
  if (geometry) await validateReferences(s, row.scene_id, merged.data, placements, markerId)
  const anchors = body.anchors !== undefined ? toLocal(merged.data.anchors, placements) : undefined
  const params = body.params !== undefined ? merged.data.params : undefined
  // Anchors come back through the placement's transform: a round trip may differ in the last bits.
  const moved = (anchors !== undefined && !sameAnchors(anchors, row.anchors as repo.StoredAnchor[])) || (params !== undefined && JSON.stringify(params) !== JSON.stringify(row.params))
  await repo.updateMarker(s.db, markerId, { label: body.label, anchors, params, userId })
  await touchScene(s.db, row.scene_id)
  await revisions.insertRevision(s.db, (await repo.findMarker(s.db, markerId))!, options.action ?? 'edited', userId)
  if (geometry) {
    if (moved) await reopenSignedOff(s, row.scene_id, [markerId], options.action === 'restored' ? REOPEN_NOTES.restored : REOPEN_NOTES.geometry, userId, { live: false })
    await checker(s).checkNow(markerId)
    if (row.kind === 'section') await sectionChanged(s, row.scene_id, merged.data.label ?? row.label, await repo.invalidateClearancesThrough(s.db, row.scene_id, [markerId]), userId, 'changed')
  }
  await s.live.markerChanged(row.scene_id, markerId)
  return present(s, markerId)
}

/** Why the server returned a signed-off marker to open (the note of its 'reopened' revision). */
const REOPEN_NOTES = {
  geometry: 'Its anchors or settings changed after the sign-off.',
  restored: 'An earlier version of its anchors or settings was restored after the sign-off.',
  placementMoved: (name: string) => `The placement “${name}” it is measured on was moved after the sign-off.`,
  placementRemoved: (name: string) => `The placement “${name}” it is measured on was removed from the scene.`,
  sectionChanged: (label: string) => `The section “${label}” it is measured through changed after the sign-off.`,
  sectionDeleted: (label: string) => `The section “${label}” it was measured through was deleted.`,
}

/**
 * DESIGN section 6: a signed-off marker whose geometry or placement changes returns to open, with a revision
 * saying why (`userId`: whose change it was). `live: false` when the caller writes the record entry itself.
 */
async function reopenSignedOff(s: Services, sceneId: string, markerIds: readonly string[], note: string, userId: string | null, options: { live: boolean }): Promise<void> {
  for (const { id } of await repo.reopenSignedOff(s.db, markerIds, note, userId)) {
    const row = await repo.findMarker(s.db, id)
    if (!row) continue
    await revisions.insertRevision(s.db, row, 'reopened', userId, { reviewState: 'open', note })
    if (options.live) await s.live.checkStored(sceneId, id)
  }
}

/** Clearances through a section that changed or went are checked again, and signed-off ones reopened. */
async function sectionChanged(s: Services, sceneId: string, label: string, clearances: { id: string; revision: number }[], userId: string | null, how: 'changed' | 'deleted'): Promise<void> {
  const note = how === 'changed' ? REOPEN_NOTES.sectionChanged(label) : REOPEN_NOTES.sectionDeleted(label)
  await reopenSignedOff(s, sceneId, clearances.map((c) => c.id), note, userId, { live: true })
  await recheck(s, sceneId, clearances)
}

/**
 * A mentor or owner sets the marker's review: open, changes-asked (with a note) or signed-off. Never on their
 * own marker; a sign-off waits for the check (it vouches for the value the server computed). Each change is a
 * revision ('reviewed') and goes into the record document.
 */
export async function reviewMarker(s: Services, markerId: string, body: MarkerReviewBody, userId: string | null): Promise<Marker> {
  const row = await repo.findMarker(s.db, markerId)
  if (!row) throw HttpError.notFound('No such marker.')
  if (row.created_by !== null && row.created_by === userId) {
    throw HttpError.forbidden('You placed this marker, so you cannot review it: another mentor or the project’s owner signs it off or asks for changes.')
  }
  const note = body.note ?? null
  if (row.review_state === body.state && row.review_note === note) return present(s, markerId)
  const pending = () =>
    HttpError.conflict(
      `“${row.label}” is still being checked (${CHECK_STATE_LOOK.pending.word}): sign it off once the server has checked it against the points, so that the sign-off covers the value it computed.`,
      'state',
    )
  if (body.state === 'signed-off' && row.check_state === 'pending') throw pending()
  // Conditional on the check not being pending at this instant (an edit may have started one meanwhile).
  if (!(await repo.setReview(s.db, markerId, { state: body.state, userId, note }))) throw pending()
  await revisions.insertRevision(s.db, (await repo.findMarker(s.db, markerId))!, 'reviewed', userId, { reviewState: body.state, note })
  await s.live.checkStored(row.scene_id, markerId)
  return present(s, markerId)
}

/**
 * A marker as a writer left it in the work document (anchors in their placements' frames): validated as the
 * API validates, then stored and checked. Returns null, or why it was refused.
 */
export async function applyLiveMarker(s: Services, sceneId: string, markerId: string, entry: LiveMarker, userId: string | null): Promise<string | null> {
  const placements = await placementsOf(s, sceneId)
  const row = await repo.findMarker(s.db, markerId)
  if (row && (row.scene_id !== sceneId || row.kind !== entry.kind)) return 'a marker keeps its scene and kind'
  const sceneAnchors = entry.anchors.map((a) => {
    const m = placements.get(a.instanceId)
    if (!m) return null
    const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
  if (sceneAnchors.some((a) => a === null)) return 'an anchor names a placement that is not in the scene'
  const parsed = MarkerCreateBody.safeParse({ kind: entry.kind, label: entry.label, anchors: sceneAnchors, params: entry.params })
  if (!parsed.success) return `${parsed.error.issues[0]!.path.join('.')}: ${parsed.error.issues[0]!.message}`
  try {
    if (!row) await ensureRoomForMarker(s, sceneId)
    await validateReferences(s, sceneId, parsed.data, placements, markerId)
  } catch (err) {
    return err instanceof HttpError ? err.message : 'refused'
  }
  const same = row && row.label === entry.label && JSON.stringify(row.anchors) === JSON.stringify(entry.anchors) && JSON.stringify(row.params) === JSON.stringify(parsed.data.params)
  if (same) return null
  let revision: number
  if (row) {
    const geometry = JSON.stringify(row.anchors) !== JSON.stringify(entry.anchors) || JSON.stringify(row.params) !== JSON.stringify(parsed.data.params)
    const updated = await repo.updateMarker(s.db, markerId, { label: entry.label, anchors: geometry ? entry.anchors : undefined, params: geometry ? parsed.data.params : undefined, userId })
    revision = updated?.revision ?? row.revision
    // The caller writes this marker's record entry next (with its review back to open).
    if (geometry) await reopenSignedOff(s, sceneId, [markerId], REOPEN_NOTES.geometry, userId, { live: false })
    if (geometry && row.kind === 'section') await sectionChanged(s, sceneId, row.label, await repo.invalidateClearancesThrough(s.db, sceneId, [markerId]), userId, 'changed')
  } else {
    revision = (await repo.insertMarker(s.db, { id: markerId, sceneId, kind: entry.kind, label: entry.label, anchors: entry.anchors, params: parsed.data.params, userId })).revision
  }
  await touchScene(s.db, sceneId)
  if (userId) settleLater(s, markerId, userId, row ? 'edited' : 'created')
  else await revisions.insertRevision(s.db, (await repo.findMarker(s.db, markerId))!, row ? 'edited' : 'created', null)
  // Checked in the background (latest wins); the result goes to the record document. The caller writes the
  // record entry of this revision (pending) at once.
  checker(s).schedule([{ id: markerId, revision }])
  return null
}

export async function removeMarker(s: Services, markerId: string, options: { fromLive?: boolean; userId?: string | null } = {}): Promise<void> {
  const row = await repo.findMarker(s.db, markerId)
  if (!row) return
  await revisions.insertRevision(s.db, row, 'deleted', options.userId ?? null)
  await repo.deleteMarker(s.db, markerId)
  await touchScene(s.db, row.scene_id)
  if (row.kind === 'section') await sectionChanged(s, row.scene_id, row.label, await repo.invalidateClearancesThrough(s.db, row.scene_id, [markerId]), options.userId ?? null, 'deleted')
  if (!options.fromLive) await s.live.markerRemoved(row.scene_id, markerId)
}

/**
 * A placement moved or was removed: the markers that depend on it go back to pending and are checked again,
 * and the signed-off ones among them return to open, saying which placement did what. The placements aligned
 * onto it lose their registration with it (server/registration/current.ts), so their markers are checked
 * again too, for the registration term in their uncertainty (their geometry did not change: no reopening).
 */
export async function placementChanged(s: Services, sceneId: string, instanceId: string, change: { how: 'moved' | 'removed'; name: string; userId: string | null }): Promise<void> {
  const invalidated = await repo.invalidateMarkersOfInstance(s.db, sceneId, instanceId)
  const note = change.how === 'moved' ? REOPEN_NOTES.placementMoved(change.name) : REOPEN_NOTES.placementRemoved(change.name)
  await reopenSignedOff(s, sceneId, invalidated.map((m) => m.id), note, change.userId, { live: true })
  // Newest revision per marker (one on both placements is counted up twice).
  const pending = new Map(invalidated.map((m) => [m.id, m.revision]))
  for (const r of await latestAcceptedFits(s.db, sceneId)) {
    if (r.held_instance_id !== instanceId || r.moving_instance_id === instanceId) continue
    for (const m of await repo.invalidateMarkersOfInstance(s.db, sceneId, r.moving_instance_id)) pending.set(m.id, m.revision)
  }
  await recheck(s, sceneId, [...pending].map(([id, revision]) => ({ id, revision })))
}

/** The project's tolerance or margin changed: every marker is checked again. */
export async function settingsChanged(s: Services, projectId: string): Promise<void> {
  checker(s).schedule(await repo.invalidateMarkersOfProject(s.db, projectId))
}

/**
 * Live edits come many a second while a person drags: one revision per person and marker once they have
 * left it alone for `liveSettleMs` (the first of a run decides created or edited).
 */
const settling = new Map<string, { timer: NodeJS.Timeout; action: 'created' | 'edited' }>()

function settleLater(s: Services, markerId: string, userId: string, action: 'created' | 'edited'): void {
  const key = `${userId}:${markerId}`
  const earlier = settling.get(key)
  if (earlier) clearTimeout(earlier.timer)
  const first = earlier?.action ?? action
  const timer = setTimeout(() => {
    settling.delete(key)
    void (async () => {
      const row = await repo.findMarker(s.db, markerId)
      if (row) await revisions.insertRevision(s.db, row, first, userId)
    })().catch((err) => s.log.error({ err, markerId }, 'a live revision could not be recorded'))
  }, s.config.liveSettleMs)
  timer.unref()
  settling.set(key, { timer, action: first })
}

/** The marker's settled edits, oldest first, anchors in the scene frame with today's placements. */
export async function historyOf(s: Services, markerId: string): Promise<MarkerRevision[]> {
  const rows = await revisions.listRevisions(s.db, markerId)
  if (rows.length === 0) {
    // A marker written before versions were recorded has an empty history; one that never was, none.
    if (await repo.findMarker(s.db, markerId)) return []
    throw HttpError.notFound('No such marker.')
  }
  return toRevisions(rows, await placementsOf(s, rows[0]!.scene_id))
}

/** The scene's markers as they were at `at` (the timeline). */
export async function sceneStateAt(s: Services, sceneId: string, at: Date): Promise<MarkerRevision[]> {
  return toRevisions(await revisions.stateAt(s.db, sceneId, at), await placementsOf(s, sceneId))
}

function toRevisions(rows: Awaited<ReturnType<typeof revisions.listRevisions>>, placements: Placements): MarkerRevision[] {
  return rows.map((r) => {
    const state = r.state as { kind: MarkerKind; label: string; anchors: repo.StoredAnchor[]; params: Record<string, unknown> }
    return {
      id: r.id,
      markerId: r.marker_id,
      revision: r.revision,
      action: r.action,
      state: { ...state, anchors: state.anchors.map((a) => toScene(a, placements)) },
      by: r.user_id && r.user_name ? { id: r.user_id, name: r.user_name } : null,
      at: r.created_at.toISOString(),
      reviewState: r.review_state,
      note: r.note,
    }
  })
}

function toScene(a: repo.StoredAnchor, placements: Placements): Anchor {
  const m = placements.get(a.instanceId)
  if (!m) return { ...a }
  const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
  return { instanceId: a.instanceId, x, y, z }
}

/** An earlier state of the marker becomes its current one, recorded as a new revision ("restored"). */
export async function restoreMarker(s: Services, markerId: string, revisionId: string, userId: string | null): Promise<Marker> {
  const revision = await revisions.findRevision(s.db, markerId, revisionId)
  if (!revision) throw invalid('revisionId', 'no revision with this id in the marker\'s history.')
  const state = revision.state as { label: string; anchors: repo.StoredAnchor[]; params: Record<string, unknown> }
  const placements = await placementsOf(s, revision.scene_id)
  return updateMarker(s, markerId, { label: state.label, anchors: state.anchors.map((a) => toScene(a, placements)), params: state.params }, userId, { action: 'restored' })
}
