import type pino from 'pino'
import * as Y from 'yjs'
import * as awarenessProtocol from 'y-protocols/awareness'
import * as syncProtocol from 'y-protocols/sync'
import * as decoding from 'lib0/decoding'
import * as encoding from 'lib0/encoding'
import type { WebSocket } from 'ws'
import { AWARENESS_LIMITS, type DocumentKind } from '@shared/collab/documents'
import type { Db } from '../db'
import { insertUpdate, loadDocumentLog, writeSnapshot } from '../repositories/sceneUpdates'

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
}

/** Compact when this many updates have piled up since the last snapshot. */
const COMPACT_EVERY = 500

/**
 * One live document in memory: its Y.Doc and awareness, the connections on it, and its store. Every update
 * is written to scene_updates before any connection is sent it: updates are applied in memory, queued, and
 * each is broadcast only once its insert has returned (so a server killed at any moment has sent nobody an
 * update it had not stored). A client's sync request is answered after the queue has drained, for the same
 * reason.
 */
export class Room {
  readonly doc = new Y.Doc({ gc: true })
  readonly awareness: awarenessProtocol.Awareness
  readonly connections = new Map<WebSocket, Connection>()
  private queue: Promise<void> = Promise.resolve()
  private sinceSnapshot = 0
  private lastId = '0'

  private constructor(
    private readonly db: Db,
    readonly sceneId: string,
    readonly kind: DocumentKind,
    private readonly log: pino.Logger,
  ) {
    this.awareness = new awarenessProtocol.Awareness(this.doc)
    // The server holds no presence of its own.
    this.awareness.setLocalState(null)
    this.doc.on('update', (update: Uint8Array, origin: unknown) => this.persistThenBroadcast(update, origin))
    this.awareness.on('update', ({ added, updated, removed }: { added: number[]; updated: number[]; removed: number[] }) => {
      const changed = [...added, ...updated, ...removed]
      const encoder = encoding.createEncoder()
      encoding.writeVarUint(encoder, MESSAGE_AWARENESS)
      encoding.writeVarUint8Array(encoder, awarenessProtocol.encodeAwarenessUpdate(this.awareness, changed))
      this.broadcast(encoding.toUint8Array(encoder), null)
    })
  }

  static async load(db: Db, sceneId: string, kind: DocumentKind, log: pino.Logger): Promise<Room> {
    const room = new Room(db, sceneId, kind, log)
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
    room.lastId = stored.lastId
    return room
  }

  /** Resolves once every update applied so far is stored and sent. */
  flushed(): Promise<void> {
    return this.queue
  }

  /** A change made by the server itself (the record document, later the checks). */
  transact(change: (doc: Y.Doc) => void): void {
    Y.transact(this.doc, () => change(this.doc), SERVER)
  }

  private persistThenBroadcast(update: Uint8Array, origin: unknown): void {
    if (origin === LOADING) return
    const from = origin instanceof Object && 'socket' in origin ? (origin as Connection) : null
    this.queue = this.queue.then(async () => {
      try {
        const { id } = await insertUpdate(this.db, this.sceneId, this.kind, update, from?.userId ?? null)
        this.lastId = id
        this.sinceSnapshot++
      } catch (err) {
        // Not stored: not sent. The sender keeps it and sends it again on its next sync.
        this.log.error({ err, sceneId: this.sceneId, doc: this.kind }, 'a live update could not be stored')
        return
      }
      const encoder = encoding.createEncoder()
      encoding.writeVarUint(encoder, MESSAGE_SYNC)
      syncProtocol.writeUpdate(encoder, update)
      this.broadcast(encoding.toUint8Array(encoder), from?.socket ?? null)
      if (this.sinceSnapshot >= COMPACT_EVERY) await this.compact()
    })
  }

  /** Folds the stored updates into one snapshot of the current state. */
  async compact(): Promise<void> {
    const upto = this.lastId
    if (upto === '0') return
    await writeSnapshot(this.db, this.sceneId, this.kind, Y.encodeStateAsUpdate(this.doc), upto)
    this.sinceSnapshot = 0
  }

  broadcast(message: Uint8Array, except: WebSocket | null): void {
    for (const socket of this.connections.keys()) if (socket !== except) send(socket, message)
  }

  /** Handles one message from a connection (the y-websocket protocol). */
  async receive(conn: Connection, data: Uint8Array): Promise<void> {
    const decoder = decoding.createDecoder(data)
    const type = decoding.readVarUint(decoder)
    if (type === MESSAGE_SYNC) {
      const subType = decoding.peekVarUint(decoder)
      // A read-only connection's step 2 and updates are dropped; it may still ask for the state (step 1).
      if (subType !== syncProtocol.messageYjsSyncStep1 && !conn.writable) return
      if (subType === syncProtocol.messageYjsSyncStep1) await this.flushed()
      const encoder = encoding.createEncoder()
      encoding.writeVarUint(encoder, MESSAGE_SYNC)
      syncProtocol.readSyncMessage(decoder, encoder, this.doc, conn)
      if (encoding.length(encoder) > 1) send(conn.socket, encoding.toUint8Array(encoder))
    } else if (type === MESSAGE_AWARENESS) {
      this.receiveAwareness(conn, decoding.readVarUint8Array(decoder))
    }
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

  /** A new connection gets the server's step 1 and everyone's presence. */
  greet(conn: Connection): void {
    const encoder = encoding.createEncoder()
    encoding.writeVarUint(encoder, MESSAGE_SYNC)
    syncProtocol.writeSyncStep1(encoder, this.doc)
    send(conn.socket, encoding.toUint8Array(encoder))
    const states = [...this.awareness.getStates().keys()]
    if (states.length > 0) {
      const a = encoding.createEncoder()
      encoding.writeVarUint(a, MESSAGE_AWARENESS)
      encoding.writeVarUint8Array(a, awarenessProtocol.encodeAwarenessUpdate(this.awareness, states))
      send(conn.socket, encoding.toUint8Array(a))
    }
  }

  leave(conn: Connection): void {
    this.connections.delete(conn.socket)
    if (conn.clientId !== null) awarenessProtocol.removeAwarenessStates(this.awareness, [conn.clientId], null)
  }
}

const LOADING = Symbol('loading')
const SERVER = Symbol('server')

function send(socket: WebSocket, message: Uint8Array): void {
  if (socket.readyState === socket.OPEN) socket.send(message, (err) => err && socket.terminate())
}
