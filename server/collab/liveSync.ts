import { DOCUMENT_VERSION, LiveInstance, LiveMarker, RECORD_MAPS, WORK_MAPS, type LiveRecord } from '@shared/collab/documents'
import { findMarker, listMarkers, type MarkerWithPeopleRow } from '../repositories/markers'
import { findInstance, listInstances, type InstanceRow } from '../repositories/scenes'
import * as markers from '../services/markers'
import { editInstanceMatrixFromLive } from '../services/scenes'
import { commentSummaryOf, parseStoredCheck, reviewOf } from '../services/mappers'
import type { LiveSync, Services } from '../types'
import type { Connection, Room } from './room'

/**
 * REST and the live documents are one model (DESIGN section 7). A change made through the API is written
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
  ) {}

  passEnded(passId: string): void {
    this.closePass(passId)
  }

  /** A document loaded for the first time is filled from PostgreSQL, once (its meta map says so). */
  async seed(room: Room): Promise<void> {
    const meta = room.doc.getMap<number>(WORK_MAPS.meta)
    if (meta.get('version') !== undefined) return this.reconcile(room)
    const db = this.services.db
    if (room.kind === 'work') {
      const [rows, instances] = await Promise.all([listMarkers(db, room.sceneId), listInstances(db, room.sceneId)])
      room.transact((doc) => {
        const m = doc.getMap<LiveMarker>(WORK_MAPS.markers), i = doc.getMap<LiveInstance>(WORK_MAPS.instances)
        for (const row of rows) m.set(row.id, liveMarkerOf(row))
        for (const row of instances) i.set(row.id, liveInstanceOf(row))
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
   * copy) leaves the two apart: on load, markers only in the document go through the service, and markers
   * only in PostgreSQL go into the document.
   */
  private async reconcile(room: Room): Promise<void> {
    if (room.kind !== 'work') return
    const s = this.services
    const rows = new Map((await listMarkers(s.db, room.sceneId)).map((r) => [r.id, r]))
    const map = room.doc.getMap<unknown>(WORK_MAPS.markers)
    for (const [id, value] of map.entries()) {
      if (rows.has(id)) continue
      const parsed = LiveMarker.safeParse(value)
      const problem = parsed.success ? await markers.applyLiveMarker(s, room.sceneId, id, parsed.data, null) : 'not a marker'
      if (problem !== null) room.transact((doc) => doc.getMap(WORK_MAPS.markers).delete(id))
      else await this.checkStored(room.sceneId, id)
    }
    const missing = [...rows.values()].filter((r) => !map.has(r.id))
    if (missing.length) room.transact((doc) => missing.forEach((r) => doc.getMap(WORK_MAPS.markers).set(r.id, liveMarkerOf(r))))
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
      await markers.removeMarker(s, markerId, { fromLive: true, userId: conn.userId })
      ;(await this.room(room.sceneId, 'record')).transact((doc) => doc.getMap(RECORD_MAPS.markers).delete(markerId))
      return
    }
    const parsed = LiveMarker.safeParse(value)
    const problem = parsed.success ? await markers.applyLiveMarker(s, room.sceneId, markerId, parsed.data, conn.userId) : 'not a marker'
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

  private async applyInstance(room: Room, instanceId: string, value: unknown, conn: Connection): Promise<void> {
    const s = this.services
    const row = await findInstance(s.db, instanceId)
    const parsed = LiveInstance.safeParse(value)
    // Placements are added and removed through the API (they need a ready scan); live edits move them.
    const ok = row && row.scene_id === room.sceneId && parsed.success && parsed.data.scanId === row.scan_id
    if (ok && (await editInstanceMatrixFromLive(s, instanceId, parsed.data, conn.userId))) return
    room.transact((doc) => {
      const m = doc.getMap(WORK_MAPS.instances)
      if (row && row.scene_id === room.sceneId) m.set(instanceId, liveInstanceOf(row))
      else m.delete(instanceId)
    })
  }
}

