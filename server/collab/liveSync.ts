import { isDeepStrictEqual } from 'node:util'
import type { z } from 'zod'
import { can } from '@shared/auth/roles'
import { DOCUMENT_VERSION, LiveInstance, LiveMarker, LiveObject, LiveTrim, RECORD_MAPS, WORK_MAPS, type LiveRecord } from '@shared/collab/documents'
import { LIVE_OPERATIONS, liveOperationOf, type LiveCheckedChangeName } from '@shared/collab/operations'
import { Id } from '@shared/schemas/common'
import { hashSecret } from '../auth/tokens'
import { HttpError } from '../errors'
import { findMarker, findMarkerCore, listMarkers, type MarkerWithPeopleRow } from '../repositories/markers'
import { findInstance, listInstances, type InstanceRow } from '../repositories/scenes'
import * as markers from '../services/markers'
import { checkMarkerCreate, checkMarkerDelete, checkMarkerUpdate, checkPlacementEdit, SERVER_ACTOR, type Actor } from '../services/markerWrites'
import { editInstance } from '../services/scenes'
import * as objects from '../services/objects'
import { findObject, findTrim, listObjects, listTrimsOfScene, type ObjectRow, type TrimRow } from '../repositories/objects'
import { commentSummaryOf, parseStoredCheck, reviewOf } from '../services/mappers'
import type { LiveSync, Services } from '../types'
import type { ConnectionRegistry } from './connections'
import { LiveRefusal, type Connection, type LiveChange, type Room } from './room'

/**
 * REST and the live documents are one model (server/collab/README.md). A change made through the API is written
 * into the work document (and a stored check into the record document) by the server; a change a writer
 * makes in the work document goes through the same marker service into PostgreSQL, and is put back as it
 * was when the service refuses it.
 */

export function liveMarkerOf(row: MarkerWithPeopleRow): LiveMarker {
  return { kind: row.kind, label: row.label, anchors: row.anchors as LiveMarker['anchors'], params: row.params as Record<string, unknown> }
}

export function liveInstanceOf(row: InstanceRow): LiveInstance {
  return { scanId: row.scan_id, matrix: row.matrix, visible: row.visible, color: row.color }
}

export function liveObjectOf(row: ObjectRow): LiveObject {
  return { name: row.name, members: row.members, stray: row.stray }
}

export function liveTrimOf(row: TrimRow): LiveTrim {
  return { instanceId: row.instance_id, objectId: row.object_id, mode: row.mode, label: row.label, shape: row.shape }
}

function recordOf(row: MarkerWithPeopleRow): LiveRecord {
  return {
    revision: row.revision,
    check: parseStoredCheck(row.check, row.check_state, row.revision),
    author: row.created_by && row.created_by_name ? { id: row.created_by, name: row.created_by_name } : null,
    lastEditor: row.updated_by && row.updated_by_name ? { id: row.updated_by, name: row.updated_by_name } : null,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
    review: reviewOf(row),
    comments: commentSummaryOf(row),
  }
}

export class LiveDocumentsSync implements LiveSync {
  constructor(
    private readonly services: Services,
    private readonly room: (sceneId: string, kind: 'work' | 'record') => Promise<Room>,
    /** Closes the open sockets of a viewing pass (the socket server's). */
    private readonly closePass: (passId: string) => void = () => {},
    /** The socket server's open connections, by account, session and project. */
    private readonly connections: Pick<ConnectionRegistry, 'membershipChanged' | 'sessionEnded' | 'userSignedOut' | 'projectDeleted'> | null = null,
    /** Ends every connection to a scene's documents and forgets its rooms (the socket server's). */
    private readonly closeScene: (sceneId: string) => void = () => {},
  ) {}

  passEnded(passId: string): void {
    this.closePass(passId)
  }

  membershipChanged(projectId: string, userId: string, role: string | null): void {
    this.connections?.membershipChanged(projectId, userId, role)
  }

  /** `sessionId` as the cookie carries it; connections know it by its SHA-256. */
  sessionEnded(sessionId: string): void {
    this.connections?.sessionEnded(hashSecret(sessionId))
  }

  userSignedOut(userId: string, reason: string): void {
    this.connections?.userSignedOut(userId, reason)
  }

  projectDeleted(projectId: string): void {
    this.connections?.projectDeleted(projectId)
  }

  sceneDeleted(sceneId: string): void {
    this.closeScene(sceneId)
  }

  /**
   * The pre-apply check (room.ts `receiveUpdate` calls it with every change an update would make): each
   * change is looked up in the registry of live operations (shared/collab/operations.ts) for the right it
   * needs, or why it is never taken, then checked by the same functions the REST routes use
   * (services/markerWrites.ts), with the connection's role as it is now. Any refusal refuses the update.
   */
  async check(room: Room, conn: Connection, changes: LiveChange[]): Promise<void> {
    const actor: Actor = { userId: conn.userId, role: conn.role }
    for (const change of changes) {
      // null: added and deleted within the update (nothing to store, but it must be a change the role may make).
      const action = change.before === undefined ? (change.after === undefined ? null : 'add') : change.after === undefined ? 'delete' : 'update'
      const name = liveOperationOf(room.kind, change.root, action ?? 'add')
      const op = LIVE_OPERATIONS[name]
      const what = change.root === WORK_MAPS.instances ? 'placement' : change.root === WORK_MAPS.markers ? 'marker' : change.root === WORK_MAPS.objects ? 'object' : change.root === WORK_MAPS.trims ? 'trim' : change.root
      const subject = change.key === null ? what : `${what} ${change.key}`
      if (op.right === null || !can(conn.role, op.right)) throw new LiveRefusal('readOnly', `${subject}: your role (${conn.role}) does not allow this`)
      if ('refused' in op) throw new LiveRefusal('refused', `${subject}: ${op.refused}`)
      if (change.key === null) throw new LiveRefusal('refused', `${subject}: only map entries may be written`)
      if (!Id.safeParse(change.key).success) throw new LiveRefusal('refused', `${subject}: an id must be a UUID`)
      if (action === null) continue
      try {
        await CHANGE_CHECKS[name as LiveCheckedChangeName](this.services, actor, room.sceneId, change.key, change.after)
      } catch (err) {
        if (err instanceof HttpError) throw new LiveRefusal('refused', `${subject}: ${err.message.replace(/^body\./, '')}`)
        throw err
      }
    }
  }

  /** A document loaded for the first time is filled from PostgreSQL, once (its meta map says so). */
  async seed(room: Room): Promise<void> {
    const meta = room.doc.getMap<number>(WORK_MAPS.meta)
    if (meta.get('version') !== undefined) return this.reconcile(room)
    const db = this.services.db
    if (room.kind === 'work') {
      const [rows, instances, objectRows, trimRows] = await Promise.all([listMarkers(db, room.sceneId), listInstances(db, room.sceneId), listObjects(db, room.sceneId), listTrimsOfScene(db, room.sceneId)])
      room.transact((doc) => {
        const m = doc.getMap<LiveMarker>(WORK_MAPS.markers), i = doc.getMap<LiveInstance>(WORK_MAPS.instances)
        for (const row of rows) m.set(row.id, liveMarkerOf(row))
        for (const row of instances) i.set(row.id, liveInstanceOf(row))
        for (const row of objectRows) doc.getMap<LiveObject>(WORK_MAPS.objects).set(row.id, liveObjectOf(row))
        for (const row of trimRows) doc.getMap<LiveTrim>(WORK_MAPS.trims).set(row.id, liveTrimOf(row))
        doc.getMap<number>(WORK_MAPS.meta).set('version', DOCUMENT_VERSION)
      })
    } else {
      const rows = await listMarkers(db, room.sceneId)
      room.transact((doc) => {
        const m = doc.getMap(RECORD_MAPS.markers)
        for (const row of rows) m.set(row.id, recordOf(row))
        doc.getMap<number>(RECORD_MAPS.meta).set('version', DOCUMENT_VERSION)
      })
    }
  }

  /**
   * A server stopped between storing a live update and mirroring it (or between a REST write and its live
   * copy, or between storing a check and writing it into the record) leaves the two apart: on load (and in
   * every loaded document when another process dies), markers only in the work document go through the
   * service, markers only in PostgreSQL go into the document, and record entries that differ from
   * PostgreSQL are written as it holds them (only those: a record already right is not written again).
   */
  async reconcile(room: Room): Promise<void> {
    if (room.kind === 'record') return this.reconcileRecord(room)
    const s = this.services
    const rows = new Map((await listMarkers(s.db, room.sceneId)).map((r) => [r.id, r]))
    const map = room.doc.getMap<unknown>(WORK_MAPS.markers)
    for (const [id, value] of map.entries()) {
      if (rows.has(id)) continue
      const parsed = LiveMarker.safeParse(value)
      const problem = parsed.success ? await markers.applyLiveMarker(s, room.sceneId, id, parsed.data, SERVER_ACTOR) : 'not a marker'
      // Refused, unless another process mirrored it meanwhile (then it is in PostgreSQL and stays).
      if (problem !== null && !(await findMarkerCore(s.db, id))) room.transact((doc) => doc.getMap(WORK_MAPS.markers).delete(id))
      else if (problem === null) await this.checkStored(room.sceneId, id)
    }
    const missing = [...rows.values()].filter((r) => !map.has(r.id))
    if (missing.length) room.transact((doc) => missing.forEach((r) => doc.getMap(WORK_MAPS.markers).set(r.id, liveMarkerOf(r))))
    await this.reconcileObjects(room)
  }

  /**
   * Objects and trims as markers are: entries only in the document go through the service (refused ones
   * leave), rows only in PostgreSQL go into the document, entries that differ are written as PostgreSQL has them.
   */
  private async reconcileObjects(room: Room): Promise<void> {
    const s = this.services
    const objectMap = room.doc.getMap<unknown>(WORK_MAPS.objects), trimMap = room.doc.getMap<unknown>(WORK_MAPS.trims)
    let objectRows = new Map((await listObjects(s.db, room.sceneId)).map((r) => [r.id, r]))
    for (const [id, value] of objectMap.entries()) {
      if (objectRows.has(id)) continue
      const ok = await objects.createObject(s, room.sceneId, value, SERVER_ACTOR, { id, fromLive: true, sceneId: room.sceneId }).then(() => true, () => false)
      if (!ok) room.transact((doc) => doc.getMap(WORK_MAPS.objects).delete(id))
    }
    objectRows = new Map((await listObjects(s.db, room.sceneId)).map((r) => [r.id, r]))
    const trimRows = new Map((await listTrimsOfScene(s.db, room.sceneId)).map((r) => [r.id, r]))
    for (const [id, value] of trimMap.entries()) {
      if (trimRows.has(id)) continue
      const parsed = LiveTrim.safeParse(value)
      const ok = parsed.success && (await objects.createTrim(s, room.sceneId, parsed.data, SERVER_ACTOR, 'placement', { id, fromLive: true }).then(() => true, () => false))
      if (!ok) room.transact((doc) => doc.getMap(WORK_MAPS.trims).delete(id))
    }
    const trimsNow = await listTrimsOfScene(s.db, room.sceneId)
    room.transact((doc) => {
      const o = doc.getMap(WORK_MAPS.objects), t = doc.getMap(WORK_MAPS.trims)
      for (const [id, row] of objectRows) if (!isDeepStrictEqual(o.get(id), liveObjectOf(row))) o.set(id, liveObjectOf(row))
      for (const id of [...o.keys()]) if (!objectRows.has(id)) o.delete(id)
      const ids = new Set(trimsNow.map((r) => r.id))
      for (const row of trimsNow) if (!isDeepStrictEqual(t.get(row.id), liveTrimOf(row))) t.set(row.id, liveTrimOf(row))
      for (const id of [...t.keys()]) if (!ids.has(id)) t.delete(id)
    })
  }

  private async reconcileRecord(room: Room): Promise<void> {
    const rows = await listMarkers(this.services.db, room.sceneId)
    const map = room.doc.getMap<unknown>(RECORD_MAPS.markers)
    const differing = rows.map((r) => [r.id, JSON.parse(JSON.stringify(recordOf(r))) as LiveRecord] as const).filter(([id, entry]) => !isDeepStrictEqual(map.get(id), entry))
    const ids = new Set(rows.map((r) => r.id))
    const gone = [...map.keys()].filter((id) => !ids.has(id))
    if (!differing.length && !gone.length) return
    room.transact((doc) => {
      const m = doc.getMap(RECORD_MAPS.markers)
      for (const [id, entry] of differing) m.set(id, entry)
      for (const id of gone) m.delete(id)
    })
  }

  async markerChanged(sceneId: string, markerId: string): Promise<void> {
    const row = await findMarker(this.services.db, markerId)
    if (!row) return
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.markers).set(markerId, liveMarkerOf(row)))
    await this.checkStored(sceneId, markerId)
  }

  async markerRemoved(sceneId: string, markerId: string): Promise<void> {
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.markers).delete(markerId))
    ;(await this.room(sceneId, 'record')).transact((doc) => doc.getMap(RECORD_MAPS.markers).delete(markerId))
  }

  async instanceChanged(sceneId: string, instanceId: string): Promise<void> {
    const row = await findInstance(this.services.db, instanceId)
    if (!row) return
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.instances).set(instanceId, liveInstanceOf(row)))
  }

  async instanceRemoved(sceneId: string, instanceId: string): Promise<void> {
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.instances).delete(instanceId))
  }

  async objectChanged(sceneId: string, objectId: string): Promise<void> {
    const row = await findObject(this.services.db, objectId)
    if (!row) return
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.objects).set(objectId, liveObjectOf(row)))
  }

  async objectRemoved(sceneId: string, objectId: string, trimIds: readonly string[]): Promise<void> {
    ;(await this.room(sceneId, 'work')).transact((doc) => {
      doc.getMap(WORK_MAPS.objects).delete(objectId)
      for (const id of trimIds) doc.getMap(WORK_MAPS.trims).delete(id)
    })
  }

  async trimChanged(sceneId: string, trimId: string): Promise<void> {
    const row = await findTrim(this.services.db, trimId)
    if (!row) return
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.trims).set(trimId, liveTrimOf(row)))
  }

  async trimRemoved(sceneId: string, trimId: string): Promise<void> {
    ;(await this.room(sceneId, 'work')).transact((doc) => doc.getMap(WORK_MAPS.trims).delete(trimId))
  }

  /** Writes the marker's record entry as PostgreSQL holds it: a stored check, a review, a comment. */
  /** One write at a time per marker, each reading the row at its turn: the last one written is the latest. */
  private storing = new Map<string, Promise<void>>()

  /**
   * The marker's record entry from its row as PostgreSQL holds it now. Calls for one marker run in order (a
   * pending re-check and a finished check can race otherwise, and an older read would land last).
   */
  async checkStored(sceneId: string, markerId: string): Promise<void> {
    const earlier = this.storing.get(markerId) ?? Promise.resolve()
    const mine = earlier
      .catch(() => undefined)
      .then(async () => {
        const room = await this.room(sceneId, 'record')
        const row = await findMarker(this.services.db, markerId)
        if (row) room.transact((doc) => doc.getMap(RECORD_MAPS.markers).set(markerId, recordOf(row)))
      })
    this.storing.set(markerId, mine)
    try {
      await mine
    } finally {
      if (this.storing.get(markerId) === mine) this.storing.delete(markerId)
    }
  }

  /** Writers' changes to the work document go through the services; refused ones are put back. */
  watch(room: Room): void {
    room.check = (conn, changes) => this.check(room, conn, changes)
    if (room.kind !== 'work') return
    const markerMap = room.doc.getMap<unknown>(WORK_MAPS.markers)
    const instanceMap = room.doc.getMap<unknown>(WORK_MAPS.instances)
    markerMap.observe((event, txn) => {
      const conn = txn.origin as Connection | null
      if (!conn || typeof conn !== 'object' || !('socket' in conn)) return
      for (const [id, change] of event.changes.keys) {
        void this.applyMarker(room, id, change.action === 'delete' ? null : markerMap.get(id), conn).catch((err) =>
          this.services.log.error({ err, markerId: id }, 'a live marker change failed'),
        )
      }
    })
    for (const [root, apply] of [
      [WORK_MAPS.objects, (id: string, value: unknown, conn: Connection) => this.applyObject(room, id, value, conn)],
      [WORK_MAPS.trims, (id: string, value: unknown, conn: Connection) => this.applyTrim(room, id, value, conn)],
    ] as const) {
      const map = room.doc.getMap<unknown>(root)
      map.observe((event, txn) => {
        const conn = txn.origin as Connection | null
        if (!conn || typeof conn !== 'object' || !('socket' in conn)) return
        for (const [id, change] of event.changes.keys) {
          void apply(id, change.action === 'delete' ? null : map.get(id), conn).catch((err) => this.services.log.error({ err, root, id }, 'a live object or trim change failed'))
        }
      })
    }
    instanceMap.observe((event, txn) => {
      const conn = txn.origin as Connection | null
      if (!conn || typeof conn !== 'object' || !('socket' in conn)) return
      for (const [id, change] of event.changes.keys) {
        void this.applyInstance(room, id, change.action === 'delete' ? null : instanceMap.get(id), conn).catch((err) =>
          this.services.log.error({ err, instanceId: id }, 'a live placement change failed'),
        )
      }
    })
  }

  private async applyMarker(room: Room, markerId: string, value: unknown, conn: Connection): Promise<void> {
    const s = this.services
    if (value === null) {
      const refused = await markers.removeMarker(s, markerId, actorOf(conn), { fromLive: true, sceneId: room.sceneId }).then(
        () => null,
        (err: unknown) => (err instanceof HttpError ? err.message : Promise.reject(err)),
      )
      if (refused !== null) return s.log.info({ markerId, problem: refused }, 'a live marker deletion was refused')
      ;(await this.room(room.sceneId, 'record')).transact((doc) => doc.getMap(RECORD_MAPS.markers).delete(markerId))
      return
    }
    const parsed = LiveMarker.safeParse(value)
    const problem = parsed.success ? await markers.applyLiveMarker(s, room.sceneId, markerId, parsed.data, actorOf(conn)) : 'not a marker'
    // The record always has the last word on a live change, even one that changed nothing: clients show a
    // marker they saw change as pending until its record entry moves.
    if (problem === null) return this.checkStored(room.sceneId, markerId)
    // Refused: the document goes back to what PostgreSQL holds (or loses the entry).
    s.log.info({ markerId, problem }, 'a live marker change was refused')
    const row = await findMarker(s.db, markerId)
    room.transact((doc) => {
      const m = doc.getMap(WORK_MAPS.markers)
      if (row && row.scene_id === room.sceneId) m.set(markerId, liveMarkerOf(row))
      else m.delete(markerId)
    })
    if (row && row.scene_id === room.sceneId) await this.checkStored(room.sceneId, markerId)
  }

  /** A writer's object entry through the objects service (checked again there); refused: put back. */
  private async applyObject(room: Room, objectId: string, value: unknown, conn: Connection): Promise<void> {
    const s = this.services
    const options = { sceneId: room.sceneId, fromLive: true, id: objectId }
    const write = async () => {
      if (value === null) return objects.removeObject(s, objectId, actorOf(conn), options)
      const entry = parseEntry(LiveObject, value)
      if (await findObject(s.db, objectId)) await objects.updateObject(s, objectId, entry, actorOf(conn), options)
      else await objects.createObject(s, room.sceneId, entry, actorOf(conn), options)
    }
    const refused = await write().then(
      () => null,
      (err: unknown) => (err instanceof HttpError ? err.message : Promise.reject(err)),
    )
    if (refused === null) return
    s.log.info({ objectId, problem: refused }, 'a live object change was refused')
    const row = await findObject(s.db, objectId)
    room.transact((doc) => {
      const m = doc.getMap(WORK_MAPS.objects)
      if (row && row.scene_id === room.sceneId) m.set(objectId, liveObjectOf(row))
      else m.delete(objectId)
    })
  }

  /** A writer's trim entry (shape in the placement's frame) through the objects service; refused: put back. */
  private async applyTrim(room: Room, trimId: string, value: unknown, conn: Connection): Promise<void> {
    const s = this.services
    const options = { sceneId: room.sceneId, fromLive: true, id: trimId }
    const write = async () => {
      if (value === null) return objects.removeTrim(s, trimId, actorOf(conn), options)
      const entry = parseEntry(LiveTrim, value)
      const before = await findTrim(s.db, trimId)
      if (!before) return void (await objects.createTrim(s, room.sceneId, entry, actorOf(conn), 'placement', options))
      if (before.instance_id !== entry.instanceId || before.object_id !== entry.objectId) throw new HttpError(400, 'invalid-input', 'a trim keeps its placement and its object; delete it and make a new one.', 'instanceId')
      await objects.updateTrim(s, trimId, { mode: entry.mode, label: entry.label, shape: entry.shape }, actorOf(conn), { ...options, frame: 'placement' })
    }
    const refused = await write().then(
      () => null,
      (err: unknown) => (err instanceof HttpError ? err.message : Promise.reject(err)),
    )
    if (refused === null) return
    s.log.info({ trimId, problem: refused }, 'a live trim change was refused')
    const row = await findTrim(s.db, trimId)
    room.transact((doc) => {
      const m = doc.getMap(WORK_MAPS.trims)
      if (row && row.scene_id === room.sceneId) m.set(trimId, liveTrimOf(row))
      else m.delete(trimId)
    })
  }

  private async applyInstance(room: Room, instanceId: string, value: unknown, conn: Connection): Promise<void> {
    const s = this.services
    // Placements are added and removed through the API (they need a ready scan); live edits move them.
    const parsed = LiveInstance.safeParse(value)
    if (parsed.success) {
      const done = await editInstance(s, instanceId, parsed.data, actorOf(conn), { sceneId: room.sceneId, fromLive: true }).then(
        () => true,
        (err: unknown) => (err instanceof HttpError ? false : Promise.reject(err)),
      )
      if (done) return
    }
    const row = await findInstance(s.db, instanceId)
    room.transact((doc) => {
      const m = doc.getMap(WORK_MAPS.instances)
      if (row && row.scene_id === room.sceneId) m.set(instanceId, liveInstanceOf(row))
      else m.delete(instanceId)
    })
  }
}


function actorOf(conn: Connection): Actor {
  return { userId: conn.userId, role: conn.role }
}

function parseEntry<T>(schema: z.ZodType<T>, value: unknown): T {
  const parsed = schema.safeParse(value)
  if (parsed.success) return parsed.data
  const issue = parsed.error.issues[0]!
  const field = issue.path.map(String).join('.')
  throw new HttpError(400, 'invalid-input', field ? `${field}: ${issue.message}` : issue.message, field)
}

/**
 * The check of each live change a role may make, keyed by the registry's names: an operation added to
 * shared/collab/operations.ts without a check here does not compile. `after`: the entry's new value
 * (undefined for a deletion).
 */
const CHANGE_CHECKS: Record<LiveCheckedChangeName, (s: Services, actor: Actor, sceneId: string, key: string, after: unknown) => Promise<unknown>> = {
  markerCreate: (s, actor, sceneId, key, after) => checkMarkerCreate(s, actor, sceneId, { frame: 'placement', body: parseEntry(LiveMarker, after) }, key),
  markerUpdate: async (s, actor, sceneId, key, after) => {
    const entry = parseEntry(LiveMarker, after)
    // In the document but not yet (or no longer) in PostgreSQL: it is a new marker as far as the store goes.
    const row = await findMarkerCore(s.db, key)
    if (!row) return checkMarkerCreate(s, actor, sceneId, { frame: 'placement', body: entry }, key)
    return checkMarkerUpdate(s, actor, key, { frame: 'placement', body: entry }, sceneId, row)
  },
  markerDelete: (s, actor, sceneId, key) => checkMarkerDelete(s, actor, key, sceneId),
  placementMove: (s, actor, sceneId, key, after) => checkPlacementEdit(s, actor, key, parseEntry(LiveInstance, after), sceneId),
  objectCreate: (s, actor, sceneId, key, after) => objects.prepareObjectCreate(s, actor, sceneId, parseEntry(LiveObject, after), key),
  objectUpdate: async (s, actor, sceneId, key, after) => {
    const entry = parseEntry(LiveObject, after)
    if (!(await findObject(s.db, key))) return objects.prepareObjectCreate(s, actor, sceneId, entry, key)
    return objects.prepareObjectUpdate(s, actor, key, entry, sceneId)
  },
  objectDelete: (s, actor, sceneId, key) => objects.prepareObjectDelete(s, actor, key, sceneId),
  trimCreate: (s, actor, sceneId, key, after) => objects.prepareTrimCreate(s, actor, sceneId, parseEntry(LiveTrim, after), 'placement', key),
  trimUpdate: async (s, actor, sceneId, key, after) => {
    const entry = parseEntry(LiveTrim, after)
    const before = await findTrim(s.db, key)
    if (!before) return objects.prepareTrimCreate(s, actor, sceneId, entry, 'placement', key)
    if (before.instance_id !== entry.instanceId || before.object_id !== entry.objectId) throw new HttpError(400, 'invalid-input', 'instanceId: a trim keeps its placement and its object; delete it and make a new one.', 'instanceId')
    return objects.prepareTrimUpdate(s, actor, key, { mode: entry.mode, label: entry.label, shape: entry.shape }, 'placement', sceneId)
  },
  trimDelete: (s, actor, sceneId, key) => objects.prepareTrimDelete(s, actor, key, sceneId),
}
