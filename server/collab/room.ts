import type pino from 'pino'
import * as Y from 'yjs'
import * as awarenessProtocol from 'y-protocols/awareness'
import * as syncProtocol from 'y-protocols/sync'
import * as decoding from 'lib0/decoding'
import * as encoding from 'lib0/encoding'
import type { WebSocket } from 'ws'
import { AWARENESS_LIMITS, CLOSE_CODES, RECORD_MAPS, WORK_MAPS, closeReason, type CloseCodeName, type DocumentKind } from '@shared/collab/documents'
import type { Role } from '@shared/auth/roles'
import { isConnectionLoss, type Db } from '../db'
import { insertUpdate, loadDocumentLog, updatesAfter, writeSnapshot } from '../repositories/sceneUpdates'
import { ConnectionBudget, LIMIT_REASONS, PRODUCTION_LIVE_LIMITS, watchBacklog, type LiveLimits } from './limits'

/** y-websocket's message types (its protocol: a varUint type, then the y-protocols payload). */
export const MESSAGE_SYNC = 0
export const MESSAGE_AWARENESS = 1

export interface Connection {
  socket: WebSocket
  /** The member's account; null for a guest holding a viewing pass. */
  userId: string | null
  /** The viewing pass of a guest connection. */
  passId: string | null
  name: string
  /** May this connection change the document? (owners and measurers on the work document) */
  writable: boolean
  /** The awareness client id this connection speaks for (the first one it announces). */
  clientId: number | null
  awarenessTimes: number[]
  /** The project the scene belongs to, and the role in it as it is now (a change of role closes the socket). */
  projectId: string
  role: Role
  /** SHA-256 of the session it came in with (null for a guest): what a sign-out names, in any process. */
  sessionId: string | null
  /**
   * Set, synchronously, the moment the connection loses its right to be heard (removed, signed out, role
   * changed, project deleted): nothing it sent is applied after that, even if the socket is still closing.
   */
  ended: { code: CloseCodeName; reason: string } | null
  /** Its counters against the live caps (server/collab/limits.ts). */
  budget: ConnectionBudget
}

/**
 * One change an incoming update would make to a root shared type of the document: the root's name, the map
 * key (null when the change is not to a map key: array or text content), and the key's value before (the
 * room's document now) and after (undefined: absent).
 */
export interface LiveChange {
  root: string
  key: string | null
  before: unknown
  after: unknown
}

/** A change refused before it was applied: the connection is closed with this code and reason. */
export class LiveRefusal extends Error {
  constructor(
    readonly code: CloseCodeName,
    readonly reason: string,
  ) {
    super(reason)
  }
}

/**
 * An update that cannot apply completely now: it depends on changes the room does not have. Not a refusal:
 * the sender is asked for what is missing (see `receiveUpdate`); nothing of it is applied meanwhile.
 */
class LiveBehind extends Error {
  constructor() {
    super('the update depends on changes the server does not have')
  }
}

/** Decides an update's changes before they are applied; throws LiveRefusal to refuse them. */
export type ChangeCheck = (conn: Connection, changes: LiveChange[]) => Promise<void>

/** Compact when this many updates have piled up since the last snapshot. */
const COMPACT_EVERY = 500

/**
 * One live document in memory: its Y.Doc and awareness, the connections on it, and its store. Every update
 * is written to scene_updates before any connection is sent it: updates are applied in memory, queued, and
 * each is broadcast only once its insert has returned (so a server killed at any moment has sent nobody an
 * update it had not stored). A client's sync request is answered after the queue has drained, for the same
 * reason.
 *
 * Several processes may hold the same document. Each stored update has a position (seq) in commit order;
 * the room knows the last position up to which it has applied everything (`applied`). Another process's
 * update is announced by PostgreSQL (repositories/sceneUpdates.ts LIVE_CHANNEL; collab/fanout.ts), and
 * `catchUp` reads every update after `applied` from the database, in order, applying those it did not write
 * itself and sending them to its own connections (they are stored already). A gap (a reconnect, a missed
 * announcement) is closed by the next catch-up, which reads by position, not by announcement.
 */
export class Room {
  readonly doc = new Y.Doc({ gc: true })
  readonly awareness: awarenessProtocol.Awareness
  readonly connections = new Map<WebSocket, Connection>()
  /** Sockets being admitted to this room right now (it is not unloaded while any is). */
  pins = 0
  private queue: Promise<void> = Promise.resolve()
  /** Incoming updates, one at a time per room: nothing can slip in between an update's check and its apply. */
  private writes: Promise<void> = Promise.resolve()
  /** The check every connection's change passes before it is applied (liveSync.ts; refuses all until set). */
  check: ChangeCheck = async () => {
    throw new LiveRefusal('refused', 'this document takes no changes yet')
  }
  private sinceSnapshot = 0
  /** Every position up to this one is applied here (as a decimal string; positions are bigints). */
  private applied = '0'
  /** Positions this room stored itself beyond `applied` (a catch-up skips them: they are applied). */
  private readonly own = new Set<string>()
  /** Told of each presence change of this process's connections (the fan-out to other processes). */
  onPresence: ((update: Uint8Array) => void) | null = null
  /** The scratch copy incoming updates are tried on first (`inspect`); null until needed, or after a refusal. */
  private shadow: Y.Doc | null = null

  private constructor(
    private readonly db: Db,
    readonly sceneId: string,
    readonly kind: DocumentKind,
    private readonly log: pino.Logger,
    readonly limits: LiveLimits,
  ) {
    this.awareness = new awarenessProtocol.Awareness(this.doc)
    // The server holds no presence of its own.
    this.awareness.setLocalState(null)
    this.doc.on('update', (update: Uint8Array, origin: unknown) => {
      if (this.shadow) Y.applyUpdate(this.shadow, update)
      if (origin === REMOTE) return this.broadcast(syncUpdateMessage(update), null)
      this.persistThenBroadcast(update, origin)
    })
    this.awareness.on('update', ({ added, updated, removed }: { added: number[]; updated: number[]; removed: number[] }, origin: unknown) => {
      const changed = [...added, ...updated, ...removed]
      const update = awarenessProtocol.encodeAwarenessUpdate(this.awareness, changed)
      const encoder = encoding.createEncoder()
      encoding.writeVarUint(encoder, MESSAGE_AWARENESS)
      encoding.writeVarUint8Array(encoder, update)
      this.broadcast(encoding.toUint8Array(encoder), null)
      // This process's connections' presence goes to the other processes too.
      if (origin !== REMOTE) this.onPresence?.(update)
    })
  }

  static async load(db: Db, sceneId: string, kind: DocumentKind, log: pino.Logger, limits: LiveLimits = PRODUCTION_LIVE_LIMITS): Promise<Room> {
    const room = new Room(db, sceneId, kind, log, limits)
    const stored = await loadDocumentLog(db, sceneId, kind)
    Y.transact(
      room.doc,
      () => {
        if (stored.snapshot) Y.applyUpdate(room.doc, stored.snapshot)
        for (const u of stored.updates) Y.applyUpdate(room.doc, u)
      },
      LOADING,
    )
    room.sinceSnapshot = stored.updates.length
    room.applied = stored.lastSeq
    return room
  }

  /** Resolves once every update applied so far is stored and sent. */
  flushed(): Promise<void> {
    return this.queue
  }

  /** A change made by the server itself (REST writes mirrored into the documents, check results into the record document). */
  transact(change: (doc: Y.Doc) => void): void {
    Y.transact(this.doc, () => change(this.doc), SERVER)
  }

  private persistThenBroadcast(update: Uint8Array, origin: unknown): void {
    if (origin === LOADING) return
    const from = origin instanceof Object && 'socket' in origin ? (origin as Connection) : null
    this.queue = this.queue.then(async () => {
      let seq: string
      for (let attempt = 0; ; attempt++) {
        try {
          ;({ seq } = await insertUpdate(this.db, this.sceneId, this.kind, update, from?.userId ?? null))
          this.sinceSnapshot++
          break
        } catch (err) {
          // The database is away (restarting, a network fault): the update is held, in order, and stored once
          // it is back (it is applied here already, so no client would send it again); nothing behind it is
          // sent before it. Any other failure: not stored, not sent, logged.
          if (isConnectionLoss(err) && !this.destroyed) {
            const delay = Math.min(2000, 100 * 2 ** attempt)
            if (attempt === 0) this.log.warn({ err, sceneId: this.sceneId, doc: this.kind }, 'the database is away; live updates are held until it is back')
            await new Promise((r) => setTimeout(r, delay))
            continue
          }
          this.log.error({ err, sceneId: this.sceneId, doc: this.kind }, 'a live update could not be stored')
          return
        }
      }
      this.broadcast(syncUpdateMessage(update), from?.socket ?? null)
      try {
        if (BigInt(seq) === BigInt(this.applied) + 1n) this.applied = seq
        else {
          // Another process stored updates in between: read them now (its announcement may come later).
          this.own.add(seq)
          await this.readAfterApplied()
        }
        if (this.sinceSnapshot >= COMPACT_EVERY) await this.compact()
      } catch (err) {
        // Stored and sent; only the reading of others' updates (or the compaction) failed: the next catch-up
        // reads them by position. The queue goes on (a failed step must not stop the stores behind it).
        this.log.warn({ err, sceneId: this.sceneId, doc: this.kind }, 'a live document could not read what others stored; the next catch-up does')
      }
    })
  }

  /**
   * Another process stored an update of this document (or the announcements were interrupted): every update
   * after `applied` is read and applied, in order. Queued behind this room's own stores.
   */
  catchUp(): Promise<void> {
    this.queue = this.queue.then(() =>
      this.readAfterApplied().catch((err: unknown) => this.log.warn({ err, sceneId: this.sceneId, doc: this.kind }, 'a live document could not catch up; the next announcement tries again')),
    )
    return this.queue
  }

  private async readAfterApplied(): Promise<void> {
    const found = await updatesAfter(this.db, this.sceneId, this.kind, this.applied)
    if (found.snapshot) Y.applyUpdate(this.doc, found.snapshot, REMOTE)
    for (const { seq, update } of found.updates) {
      if (this.own.delete(seq)) continue
      Y.applyUpdate(this.doc, update, REMOTE)
    }
    if (BigInt(found.lastSeq) > BigInt(this.applied)) this.applied = found.lastSeq
    for (const seq of this.own) if (BigInt(seq) <= BigInt(this.applied)) this.own.delete(seq)
  }

  /** The last position up to which this room has applied every stored update (tests). */
  get appliedPosition(): string {
    return this.applied
  }

  /** Folds the stored updates into one snapshot of the current state (everything up to `applied`). */
  async compact(): Promise<void> {
    const upto = this.applied
    if (upto === '0') return
    await writeSnapshot(this.db, this.sceneId, this.kind, Y.encodeStateAsUpdate(this.doc), upto)
    this.sinceSnapshot = 0
  }

  broadcast(message: Uint8Array, except: WebSocket | null): void {
    for (const socket of this.connections.keys()) if (socket !== except) this.send(socket, message)
  }

  /** Handles one message from a connection (the y-websocket protocol). */
  async receive(conn: Connection, data: Uint8Array): Promise<void> {
    if (conn.ended) return
    const budget = conn.budget
    if (!conn.writable && data.byteLength > budget.limits.readOnlyBaseBytes) {
      // A read-only connection sends its sync request (a state vector) and its presence, nothing bigger.
      const cap = budget.readOnlyCap(Y.encodeStateVector(this.doc).byteLength)
      if (data.byteLength > cap) return this.overCap(conn, LIMIT_REASONS.readOnly(data.byteLength))
    }
    const decoder = decoding.createDecoder(data)
    const type = decoding.readVarUint(decoder)
    if (type === MESSAGE_SYNC) {
      const subType = decoding.readVarUint(decoder)
      const now = Date.now()
      if (subType === syncProtocol.messageYjsSyncStep1 && !budget.syncs.take(now)) return this.overCap(conn, LIMIT_REASONS.syncRequests(budget.limits.syncRequestsPerSecond))
      if (subType !== syncProtocol.messageYjsSyncStep1) {
        if (data.byteLength > budget.limits.writeBytes) return this.overCap(conn, LIMIT_REASONS.writeBytes(budget.limits.writeBytes))
        if (!budget.writes.take(now)) return this.overCap(conn, LIMIT_REASONS.writes(budget.limits.writesPerSecond))
      }
      if (subType === syncProtocol.messageYjsSyncStep1) {
        // A sync request: answered once every stored update has gone out.
        await this.flushed()
        const encoder = encoding.createEncoder()
        encoding.writeVarUint(encoder, MESSAGE_SYNC)
        syncProtocol.readSyncStep1(decoder, encoder, this.doc)
        this.send(conn.socket, encoding.toUint8Array(encoder))
      } else if (subType === syncProtocol.messageYjsSyncStep2 || subType === syncProtocol.messageYjsUpdate) {
        await this.receiveUpdate(conn, decoding.readVarUint8Array(decoder))
      }
    } else if (type === MESSAGE_AWARENESS) {
      this.receiveAwareness(conn, decoding.readVarUint8Array(decoder))
    }
  }

  /**
   * The pre-apply check: an update (sync step 2 or an update message) is applied to a scratch copy of the
   * document first, every change it would make is listed (`inspect`) and decided (`check`: the connection's
   * right now, the ids' scene, the values), and only then is it applied to the room's document, with the
   * connection as origin. Refused: the socket is closed with a named code (a silently dropped update would
   * stall every later one from that client, since Yjs applies updates in causal order). One update at a time
   * per room, so nothing changes between the check and the apply but the server's own writes.
   */
  private receiveUpdate(conn: Connection, update: Uint8Array): Promise<void> {
    const turn = this.writes.then(async () => {
      if (conn.ended) return
      let applied = false
      try {
        const { changes, changesSomething } = this.inspect(update)
        // Nothing new (a sync reply with what the server has): the scratch copy is still the room's document.
        applied = !changesSomething
        if (!changesSomething) return
        if (!conn.writable) throw new LiveRefusal('readOnly', this.kind === 'record' ? 'the record document is written by the server only' : `your role (${conn.role}) only reads this document`)
        await this.check(conn, changes)
        // Ended while it was being checked (removed, signed out): not applied.
        if (conn.ended) return
        Y.applyUpdate(this.doc, update, conn)
        applied = true
      } finally {
        // The scratch copy took an update the room did not: it is made again from the room's document.
        if (!applied) this.shadow = null
      }
    })
    this.writes = turn.catch(() => undefined)
    return turn.catch((err: unknown) => {
      if (err instanceof LiveBehind) {
        // The update builds on changes this room does not have yet (a client back from a lost connection
        // sends its new edits before its sync reply): nothing of it is applied, and the client is asked for
        // everything the room lacks (a sync step 1), which its reply carries, this update included.
        const encoder = encoding.createEncoder()
        encoding.writeVarUint(encoder, MESSAGE_SYNC)
        syncProtocol.writeSyncStep1(encoder, this.doc)
        this.send(conn.socket, encoding.toUint8Array(encoder))
        return
      }
      // A fault of the server's own: closed too (kept open, the client's next updates would wait on this one).
      if (!(err instanceof LiveRefusal)) {
        this.log.error({ err, sceneId: this.sceneId, doc: this.kind }, 'a live change could not be checked')
        return Room.end(conn, 'serverError', 'server error')
      }
      this.log.info({ sceneId: this.sceneId, doc: this.kind, userId: conn.userId, passId: conn.passId, code: err.code, reason: err.reason }, 'a live change was refused')
      Room.end(conn, err.code, err.reason)
    })
  }

  /** The scratch copy of the document, made from it when first needed. */
  private shadowDoc(): Y.Doc {
    if (!this.shadow) {
      const copy = new Y.Doc({ gc: true })
      Y.applyUpdate(copy, Y.encodeStateAsUpdate(this.doc))
      for (const name of this.kind === 'work' ? Object.values(WORK_MAPS) : Object.values(RECORD_MAPS)) copy.getMap(name)
      this.shadow = copy
    }
    return this.shadow
  }

  /** Marks the connection ended (nothing more of it is applied) and closes its socket with the code. */
  static end(conn: Connection, code: CloseCodeName, reason: string): void {
    conn.ended ??= { code, reason }
    if (conn.socket.readyState === conn.socket.OPEN || conn.socket.readyState === conn.socket.CONNECTING) conn.socket.close(CLOSE_CODES[code], closeReason(reason))
  }

  /**
   * What an update would change, found by applying it to a scratch copy of the document. Refused outright:
   * an update that writes inside a nested shared type, puts a shared type or a sub-document in an entry,
   * writes array or text content, or cannot apply completely now (structs or deletions that wait for ones
   * the server does not have: they could apply later, unchecked). The scratch copy is kept between updates
   * (a copy per update costs a full encode of the document: 28 ms at 5 000 markers) and follows every change
   * of the room's document; an update it took that the room did not is dropped with it (`receiveUpdate`).
   */
  inspect(update: Uint8Array): { changes: LiveChange[]; changesSomething: boolean } {
    const scratch = this.shadowDoc()
    const maps = this.kind === 'work' ? Object.values(WORK_MAPS) : Object.values(RECORD_MAPS)
    const before = Y.encodeStateVector(scratch)
    const changed = new Map<Y.AbstractType<unknown>, Set<string | null>>()
    let deletes = false
    const listen = (tr: Y.Transaction) => {
      for (const [type, keys] of tr.changed) changed.set(type as Y.AbstractType<unknown>, new Set([...(changed.get(type as Y.AbstractType<unknown>) ?? []), ...keys]))
      deletes ||= tr.deleteSet.clients.size > 0
    }
    scratch.on('afterTransaction', listen)
    try {
      Y.applyUpdate(scratch, update)
    } catch {
      throw new LiveRefusal('refused', 'the update could not be read')
    } finally {
      scratch.off('afterTransaction', listen)
    }
    if (scratch.store.pendingStructs !== null || scratch.store.pendingDs !== null) {
      throw new LiveBehind()
    }
    const grew = !equalBytes(before, Y.encodeStateVector(scratch))
    const names = new Map<Y.AbstractType<unknown>, string>()
    for (const [name, type] of scratch.share) names.set(type as Y.AbstractType<unknown>, name)
    const changes: LiveChange[] = []
    for (const [type, keys] of changed) {
      const root = names.get(type)
      if (root === undefined || type._item !== null) throw new LiveRefusal('refused', 'the update writes inside a nested shared type')
      for (const key of keys) {
        if (key === null) {
          changes.push({ root, key: null, before: undefined, after: undefined })
          continue
        }
        const after = (type as Y.Map<unknown>)._map?.get(key)
        const value = after && !after.deleted ? after.content.getContent().at(-1) : undefined
        if (value instanceof Y.AbstractType || value instanceof Y.Doc) throw new LiveRefusal('refused', `${root} ${key}: an entry must be plain data, not a shared type`)
        const current = maps.includes(root as never) ? this.doc.getMap<unknown>(root).get(key) : undefined
        changes.push({ root, key, before: current, after: value })
      }
    }
    return { changes, changesSomething: grew || deletes || changes.length > 0 }
  }

  /**
   * Presence is accepted only for the connection's own client id, with the name from its session, within
   * a size and rate cap; anything else is dropped whole.
   */
  private receiveAwareness(conn: Connection, update: Uint8Array): void {
    if (update.byteLength > AWARENESS_LIMITS.maxBytes) return
    const now = Date.now()
    conn.awarenessTimes = conn.awarenessTimes.filter((t) => now - t < 1000)
    if (conn.awarenessTimes.length >= AWARENESS_LIMITS.perSecond) return
    conn.awarenessTimes.push(now)
    const decoder = decoding.createDecoder(update)
    const entries: { clientId: number; clock: number; state: unknown }[] = []
    try {
      const count = decoding.readVarUint(decoder)
      for (let i = 0; i < count; i++) {
        const clientId = decoding.readVarUint(decoder)
        const clock = decoding.readVarUint(decoder)
        entries.push({ clientId, clock, state: JSON.parse(decoding.readVarString(decoder)) })
      }
    } catch {
      return
    }
    if (entries.length !== 1) return
    const [entry] = entries as [{ clientId: number; clock: number; state: unknown }]
    if (conn.clientId === null) {
      if ([...this.connections.values()].some((c) => c !== conn && c.clientId === entry.clientId)) return
      conn.clientId = entry.clientId
    }
    if (entry.clientId !== conn.clientId) return
    const state = entry.state === null ? null : { ...(entry.state as Record<string, unknown>), user: { id: conn.userId ?? `pass:${conn.passId}`, name: conn.name, ...(conn.passId ? { guest: true } : {}) } }
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, 1)
    encoding.writeVarUint(encoder, entry.clientId)
    encoding.writeVarUint(encoder, entry.clock)
    encoding.writeVarString(encoder, JSON.stringify(state))
    awarenessProtocol.applyAwarenessUpdate(this.awareness, encoding.toUint8Array(encoder), conn)
  }

  /** Presence from another process's connections: shown to this room's connections, not sent back out. */
  applyRemotePresence(update: Uint8Array): void {
    awarenessProtocol.applyAwarenessUpdate(this.awareness, update, REMOTE)
  }

  /** A new connection gets the server's step 1 and everyone's presence. */
  greet(conn: Connection): void {
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, MESSAGE_SYNC)
    syncProtocol.writeSyncStep1(encoder, this.doc)
    this.send(conn.socket, encoding.toUint8Array(encoder))
    const states = [...this.awareness.getStates().keys()]
    if (states.length > 0) {
      const a = encoding.createEncoder()
      encoding.writeVarUint(a, MESSAGE_AWARENESS)
      encoding.writeVarUint8Array(a, awarenessProtocol.encodeAwarenessUpdate(this.awareness, states))
      this.send(conn.socket, encoding.toUint8Array(a))
    }
  }

  /** A connection passed one of its caps: closed with tooMuch, and said in the log. */
  private overCap(conn: Connection, reason: string): void {
    this.log.info({ sceneId: this.sceneId, doc: this.kind, userId: conn.userId, passId: conn.passId, reason }, 'a live connection passed a cap: closed')
    Room.end(conn, 'tooMuch', reason)
  }

  /** Frees the document's memory (the socket server's unload, once nobody has it open). */
  private destroyed = false

  destroy(): void {
    this.destroyed = true
    this.awareness.destroy()
    this.shadow?.destroy()
    this.shadow = null
    this.doc.destroy()
  }

  /** Sends a message, and cuts off a socket whose unsent data stays over the backlog cap. */
  private send(socket: WebSocket, message: Uint8Array): void {
    if (socket.readyState !== socket.OPEN) return
    socket.send(message, (err) => err && socket.terminate())
    watchBacklog(socket, this.limits, () => {
      const conn = this.connections.get(socket)
      if (conn) conn.ended ??= { code: 'tooMuch', reason: LIMIT_REASONS.backlog(this.limits.backlogBytes, this.limits.backlogMs) }
      this.log.info({ sceneId: this.sceneId, doc: this.kind, userId: conn?.userId, bufferedAmount: socket.bufferedAmount }, 'a live connection left too much unread: cut off')
      socket.terminate()
    })
  }

  leave(conn: Connection): void {
    this.connections.delete(conn.socket)
    if (conn.clientId !== null) awarenessProtocol.removeAwarenessStates(this.awareness, [conn.clientId], null)
  }
}

const LOADING = Symbol('loading')
const SERVER = Symbol('server')
/** Stored already, by another process: applied and sent to this room's connections, not stored again. */
const REMOTE = Symbol('remote')

function syncUpdateMessage(update: Uint8Array): Uint8Array {
  const encoder = encoding.createEncoder()
  encoding.writeVarUint(encoder, MESSAGE_SYNC)
  syncProtocol.writeUpdate(encoder, update)
  return encoding.toUint8Array(encoder)
}

function equalBytes(a: Uint8Array, b: Uint8Array): boolean {
  return a.byteLength === b.byteLength && a.every((v, i) => v === b[i])
}
