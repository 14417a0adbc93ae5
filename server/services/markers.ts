import { transformPoint } from '@shared/geometry/rigidTransform'
import type { LiveMarker } from '@shared/collab/documents'
import { kindWord, type Anchor, type HistoryPageQuery, type Marker, type MarkerCreateBody, type MarkerKind, type MarkerReviewBody, type MarkerRevision, type MarkerUpdateBody } from '@shared/schemas'
import { CHECK_STATE_LOOK } from '@shared/collab/states'
import { HttpError } from '../errors'
import * as repo from '../repositories/markers'
import * as revisions from '../repositories/markerRevisions'
import { touchScene } from '../repositories/scenes'
import { latestAcceptedFits } from '../repositories/registrations'
import { invalidateMarkersOfObjects, objectsOfInstance } from '../repositories/objects'
import type { Services } from '../types'
import type { MarkerChecker } from '../markers/checker'
import { toMarker } from './mappers'
import { checkMarkerCreate, checkMarkerDelete, checkMarkerUpdate, invalid, placementsOf, type Actor, type Placements } from './markerWrites'

/**
 * Every marker write goes through here, whichever door it came in by (the REST routes, the live work
 * document): the checks of ./markerWrites.ts (right, scene, values, references, new ids), then the row, the
 * revision and the check.
 */

/** Same anchors within a nanometre (placement frame): an edit that moved nothing. */
function sameAnchors(a: readonly repo.StoredAnchor[], b: readonly repo.StoredAnchor[]): boolean {
  return a.length === b.length && a.every((p, i) => p.instanceId === b[i]!.instanceId && Math.hypot(p.x - b[i]!.x, p.y - b[i]!.y, p.z - b[i]!.z) < 1e-9)
}

function defaultLabel(kind: MarkerKind, n: number): string {
  return `${kindWord(kind)} ${n}`
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

export async function createMarker(s: Services, sceneId: string, input: MarkerCreateBody, actor: Actor): Promise<Marker> {
  const userId = actor.userId
  const { body, anchors } = await checkMarkerCreate(s, actor, sceneId, { frame: 'scene', body: input })
  const label = body.label ?? defaultLabel(body.kind, Number((await repo.countMarkersOfKind(s.db, sceneId, body.kind)).n) + 1)
  const { id } = await repo.insertMarker(s.db, { sceneId, kind: body.kind, label, anchors, params: body.params, userId })
  await touchScene(s.db, sceneId)
  await revisions.insertRevision(s.db, (await repo.findMarker(s.db, id))!, 'created', userId)
  await checker(s).checkNow(id)
  await s.live.markerChanged(sceneId, id)
  return present(s, id)
}

export async function updateMarker(s: Services, markerId: string, body: MarkerUpdateBody, actor: Actor, options: { action?: 'edited' | 'restored' } = {}): Promise<Marker> {
  const userId = actor.userId
  // The merged marker must be a valid marker of its kind (anchors in the scene frame, as the API takes them).
  const { row, merged, anchors, params, geometry } = await checkMarkerUpdate(s, actor, markerId, { frame: 'scene', body })
  // Anchors come back through the placement's transform: a round trip may differ in the last bits.
  const moved = (anchors !== undefined && !sameAnchors(anchors, row.anchors as repo.StoredAnchor[])) || (params !== undefined && JSON.stringify(params) !== JSON.stringify(row.params))
  await repo.updateMarker(s.db, markerId, { label: body.label, anchors, params, userId })
  await touchScene(s.db, row.scene_id)
  await revisions.insertRevision(s.db, (await repo.findMarker(s.db, markerId))!, options.action ?? 'edited', userId)
  if (geometry) {
    if (moved) await reopenSignedOff(s, row.scene_id, [markerId], options.action === 'restored' ? REOPEN_NOTES.restored : REOPEN_NOTES.geometry, userId, { live: false })
    await checker(s).checkNow(markerId)
    await dependencyChanged(s, row.scene_id, row.kind, merged.label ?? row.label, await repo.invalidateDependents(s.db, row.scene_id, [markerId], row.kind), userId, 'changed')
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
  throughChanged: (kind: MarkerKind, label: string) => `The ${kindWord(kind)} “${label}” it is measured through changed after the sign-off.`,
  throughDeleted: (kind: MarkerKind, label: string) => `The ${kindWord(kind)} “${label}” it was measured through was deleted.`,
}

/**
 * The review rule (server/markers/README.md, "Comments and review"): a signed-off marker whose geometry or placement changes returns to open, with a revision
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

/**
 * Markers measured through one that changed or went (a clearance through its section: the kinds' `dependsOn`,
 * shared/kinds) are checked again, and signed-off ones reopened.
 */
async function dependencyChanged(s: Services, sceneId: string, kind: MarkerKind, label: string, dependents: { id: string; revision: number }[], userId: string | null, how: 'changed' | 'deleted'): Promise<void> {
  if (dependents.length === 0) return
  const note = how === 'changed' ? REOPEN_NOTES.throughChanged(kind, label) : REOPEN_NOTES.throughDeleted(kind, label)
  await reopenSignedOff(s, sceneId, dependents.map((c) => c.id), note, userId, { live: true })
  await recheck(s, sceneId, dependents)
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
 * A marker as a writer left it in the work document (anchors in their placements' frames), already checked
 * before the change was applied (server/collab/liveSync.ts); checked again here against PostgreSQL as it is
 * now, through the same checks as the API, then stored and checked. Returns null, or why it was refused.
 */
export async function applyLiveMarker(s: Services, sceneId: string, markerId: string, entry: LiveMarker, actor: Actor): Promise<string | null> {
  const userId = actor.userId
  const row = await repo.findMarkerCore(s.db, markerId)
  let revision: number
  try {
    if (row) {
      const checked = await checkMarkerUpdate(s, actor, markerId, { frame: 'placement', body: entry }, sceneId, row)
      const same = row.label === entry.label && JSON.stringify(row.anchors) === JSON.stringify(entry.anchors) && JSON.stringify(row.params) === JSON.stringify(checked.merged.params)
      if (same) return null
      const geometry = JSON.stringify(row.anchors) !== JSON.stringify(entry.anchors) || JSON.stringify(row.params) !== JSON.stringify(checked.merged.params)
      const updated = await repo.updateMarker(s.db, markerId, { label: entry.label, anchors: geometry ? entry.anchors : undefined, params: geometry ? checked.merged.params : undefined, userId })
      revision = updated?.revision ?? row.revision
      // The caller writes this marker's record entry next (with its review back to open).
      if (geometry) await reopenSignedOff(s, sceneId, [markerId], REOPEN_NOTES.geometry, userId, { live: false })
      if (geometry) await dependencyChanged(s, sceneId, row.kind, row.label, await repo.invalidateDependents(s.db, sceneId, [markerId], row.kind), userId, 'changed')
    } else {
      const checked = await checkMarkerCreate(s, actor, sceneId, { frame: 'placement', body: entry }, markerId)
      revision = (await repo.insertMarker(s.db, { id: markerId, sceneId, kind: checked.body.kind, label: entry.label, anchors: checked.anchors, params: checked.body.params, userId })).revision
    }
  } catch (err) {
    if (err instanceof HttpError) return err.message
    throw err
  }
  await touchScene(s.db, sceneId)
  if (userId) settleLater(s, markerId, userId, row ? 'edited' : 'created')
  else await revisions.insertRevision(s.db, (await repo.findMarker(s.db, markerId))!, row ? 'edited' : 'created', null)
  // Checked in the background (latest wins); the result goes to the record document. The caller writes the
  // record entry of this revision (pending) at once.
  checker(s).schedule([{ id: markerId, revision }])
  return null
}

/**
 * Deletes a marker (REST, or a live writer's deletion of its entry). `sceneId`: the live document's scene;
 * another scene's marker is refused there (404), as every other check is, by ./markerWrites.ts.
 */
export async function removeMarker(s: Services, markerId: string, actor: Actor, options: { fromLive?: boolean; sceneId?: string } = {}): Promise<void> {
  const row = await checkMarkerDelete(s, actor, markerId, options.sceneId)
  if (!row) return
  const userId = actor.userId
  await revisions.insertRevision(s.db, row, 'deleted', userId)
  await repo.deleteMarker(s.db, markerId)
  await touchScene(s.db, row.scene_id)
  await dependencyChanged(s, row.scene_id, row.kind, row.label, await repo.invalidateDependents(s.db, row.scene_id, [markerId], row.kind), userId, 'deleted')
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

/**
 * The points some markers read changed without any placement moving: an object's trims, members or stray
 * setting (`objectIds`: markers naming those objects), or a placement's scene cuts (`instanceIds`: everything
 * measured on the placement, and markers naming an object it belongs to). They are checked again, and the
 * signed-off ones return to open with `note` saying why.
 */
export async function pointsChanged(s: Services, sceneId: string, change: { instanceIds?: readonly string[]; objectIds?: readonly string[]; note: string; userId: string | null }): Promise<void> {
  const pending = new Map<string, number>()
  const objectIds = new Set(change.objectIds ?? [])
  for (const instanceId of change.instanceIds ?? []) {
    for (const m of await repo.invalidateMarkersOfInstance(s.db, sceneId, instanceId)) pending.set(m.id, m.revision)
    for (const id of await objectsOfInstance(s.db, instanceId)) objectIds.add(id)
  }
  const ofObjects = await invalidateMarkersOfObjects(s.db, sceneId, [...objectIds])
  for (const m of [...ofObjects, ...(await repo.invalidateDependents(s.db, sceneId, ofObjects.map((m) => m.id)))]) pending.set(m.id, m.revision)
  await reopenSignedOff(s, sceneId, [...pending.keys()], change.note, change.userId, { live: true })
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

/**
 * The marker's settled edits, oldest first, anchors in the scene frame with today's placements. Only the
 * revisions of the marker's own scene (its row's, or once deleted the scene it was made in): a revision
 * written under the same id in another scene is never shown here.
 */
/** A page of a marker's history, newest page first (HistoryPageQuery). */
export async function historyOf(s: Services, markerId: string, page: HistoryPageQuery): Promise<{ revisions: MarkerRevision[]; earlier: string | null }> {
  const place = await repo.sceneOfMarkerId(s.db, markerId)
  if (!place) throw HttpError.notFound('No such marker.')
  const { rows, earlier } = await revisions.listRevisions(s.db, markerId, place.scene_id, page)
  return { revisions: toRevisions(rows, await placementsOf(s, place.scene_id)), earlier }
}

/** The scene's markers as they were at `at` (the timeline). */
export async function sceneStateAt(s: Services, sceneId: string, at: Date): Promise<MarkerRevision[]> {
  return toRevisions(await revisions.stateAt(s.db, sceneId, at), await placementsOf(s, sceneId))
}

function toRevisions(rows: Awaited<ReturnType<typeof revisions.listRevisions>>['rows'], placements: Placements): MarkerRevision[] {
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
export async function restoreMarker(s: Services, markerId: string, revisionId: string, actor: Actor): Promise<Marker> {
  const row = await repo.findMarker(s.db, markerId)
  if (!row) throw HttpError.notFound('No such marker.')
  // Only a revision of this marker in its own scene.
  const revision = await revisions.findRevision(s.db, markerId, revisionId, row.scene_id)
  if (!revision) throw invalid('revisionId', 'no revision with this id in the marker\'s history.')
  const state = revision.state as { label: string; anchors: repo.StoredAnchor[]; params: Record<string, unknown> }
  const placements = await placementsOf(s, revision.scene_id)
  return updateMarker(s, markerId, { label: state.label, anchors: state.anchors.map((a) => toScene(a, placements)), params: state.params }, actor, { action: 'restored' })
}
