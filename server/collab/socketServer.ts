import type http from 'node:http'
import type { Duplex } from 'node:stream'
import type pino from 'pino'
import { WebSocketServer, type WebSocket } from 'ws'
import { can } from '@shared/auth/roles'
import { CLOSE_CODES, closeReason, type DocumentKind } from '@shared/collab/documents'
import { GUEST_COOKIE, readCookie } from '../auth/guestSessions'
import { hashSecret } from '../auth/tokens'
import { findMembership } from '../repositories/memberships'
import { findPassBySession } from '../repositories/passes'
import { projectOfScene } from '../repositories/scenes'
import type { Services } from '../types'
import { originMatches } from '../middleware/origin'
import { ConnectionRegistry } from './connections'
import { LiveFanout, type Revocation } from './fanout'
import { LiveDocumentsSync } from './liveSync'
import { ConnectionBudget, EarlyMessages, LIMIT_REASONS } from './limits'
import { Room, type Connection } from './room'

const PATH = /^\/collab\/([0-9a-f-]{36})(\/record)?$/i

/**
 * The live documents' WebSocket endpoint (server/collab/README.md): `/collab/:sceneId` (the work document) and
 * `/collab/:sceneId/record` (the record document), speaking y-websocket's protocol. The upgrade is taken,
 * then decided: a bad Origin, no session, no such scene or no membership closes the socket at once with a
 * named code (shared/collab/documents.ts CLOSE_CODES), so a client can tell why. Owners and measurers write
 * the work document; everyone else, and everyone on the record document, is read-only. A guest holding a
 * viewing pass comes in with its guest session cookie (never a token in the URL), read-only, to its own
 * project only; revoking the pass, or its expiry, closes its sockets with CLOSE_CODES.forbidden.
 */
export class CollabServer {
  private readonly wss = new WebSocketServer({ noServer: true, maxPayload: 8 * 1024 * 1024 })
  private readonly rooms = new Map<string, Promise<Room>>()
  /** Open sockets per viewing pass, so a revoked pass is cut off at once. */
  private readonly passSockets = new Map<string, Set<WebSocket>>()
  /** Open connections by account, session and project (roles bind open sockets: see connections.ts). */
  readonly connections = new ConnectionRegistry((conn, code, reason) => Room.end(conn, code, reason))
  private readonly log: pino.Logger
  /** REST and live as one model. */
  readonly sync: LiveDocumentsSync

  constructor(
    private readonly services: Services,
    allowedOrigins: () => string[],
  ) {
    this.log = services.log.child({ part: 'collab' })
    this.allowedOrigins = allowedOrigins
    this.fanout = new LiveFanout(services.config.databaseUrl, services.db, this.log, {
      // Its own updates (already applied) and ones a catch-up has read already are not read again.
      update: (sceneId, kind, seq) => void this.loadedRoom(sceneId, kind)?.then((r) => void (BigInt(seq) > BigInt(r.appliedPosition) && r.catchUp()), () => undefined),
      revocation: (r) => this.revokeHere(r),
      presence: (sceneId, kind, update) => void this.loadedRoom(sceneId, kind)?.then((r) => r.applyRemotePresence(update), () => undefined),
      // The database was away: every loaded document catches up, then is brought in line with PostgreSQL
      // (a live change whose mirror into the markers table failed meanwhile is written now).
      reconnected: () => void this.reconcileLoaded(),
    })
    // Every revocation is applied here at once and told to the other processes.
    const everywhere = (r: Revocation) => {
      this.revokeHere(r)
      void this.fanout.revoke(r).catch((err: unknown) => this.log.error({ err, revocation: r.event }, 'a revocation could not be told to the other processes'))
    }
    this.sync = new LiveDocumentsSync(services, (sceneId, kind) => this.room(sceneId, kind), (passId) => everywhere({ event: 'passEnded', passId }), {
      membershipChanged: (projectId, userId, role) => everywhere({ event: 'membershipChanged', projectId, userId, role }),
      sessionEnded: (sessionHash) => everywhere({ event: 'sessionEnded', sessionHash }),
      userSignedOut: (userId, reason) => everywhere({ event: 'userSignedOut', userId, reason }),
      projectDeleted: (projectId) => everywhere({ event: 'projectDeleted', projectId }),
    }, (sceneId) => everywhere({ event: 'sceneDeleted', sceneId }))
  }

  /** Live documents across processes (collab/fanout.ts). */
  readonly fanout: LiveFanout

  /** Starts listening to the other processes (before the server takes connections). */
  async listen(): Promise<void> {
    await this.fanout.start()
  }

  /** A revocation made in this process or another: the connections here it concerns end now. */
  private revokeHere(r: Revocation): void {
    switch (r.event) {
      case 'membershipChanged':
        return this.connections.membershipChanged(r.projectId, r.userId, r.role)
      case 'sessionEnded':
        return this.connections.sessionEnded(r.sessionHash)
      case 'userSignedOut':
        return this.connections.userSignedOut(r.userId, r.reason)
      case 'projectDeleted':
        return this.connections.projectDeleted(r.projectId)
      case 'sceneDeleted':
        return this.closeScene(r.sceneId)
      case 'passEnded':
        return this.closePass(r.passId)
    }
  }

  /** The room of a document if this process has it in memory (it is not loaded for an announcement). */
  private loadedRoom(sceneId: string, kind: DocumentKind): Promise<Room> | undefined {
    return this.rooms.get(`${sceneId}:${kind}`)
  }

  private readonly allowedOrigins: () => string[]

  attach(server: http.Server): void {
    server.on('upgrade', (req: http.IncomingMessage, socket: Duplex, head: Buffer) => {
      const url = new URL(req.url ?? '/', 'http://localhost')
      const match = PATH.exec(url.pathname)
      if (!match) return socket.destroy()
      this.wss.handleUpgrade(req, socket, head, (ws) => {
        void this.admit(ws, req, match[1]!.toLowerCase(), match[2] ? 'record' : 'work').catch((err) => {
          this.log.error({ err }, 'live connection failed')
          ws.close(1011, 'server error')
        })
      })
    })
  }

  private originAllowed(req: http.IncomingMessage): boolean {
    const origin = req.headers.origin
    if (!origin) return false
    // Scheme and host, as the REST guard does; a TLS connection is https, a trusted proxy may say so.
    const forwarded = this.services.config.trustProxy ? String(req.headers['x-forwarded-proto'] ?? '').split(',')[0]!.trim() : ''
    const scheme = forwarded || ((req.socket as { encrypted?: boolean }).encrypted ? 'https' : 'http')
    return originMatches(origin, scheme, req.headers.host, this.allowedOrigins())
  }

  private async admit(ws: WebSocket, req: http.IncomingMessage, sceneId: string, kind: DocumentKind): Promise<void> {
    // The client speaks first (its sync step 1) while the session is still being checked: hold its messages,
    // within a cap (a socket that floods before it is admitted is closed and what it sent dropped).
    const limits = this.services.config.live
    const early = new EarlyMessages(limits)
    let deliver: ((bytes: Uint8Array) => void) | null = null
    ws.binaryType = 'nodebuffer'
    ws.on('message', (data: Buffer) => {
      const bytes = new Uint8Array(data.buffer, data.byteOffset, data.byteLength)
      if (deliver) deliver(bytes)
      else if (!early.push(bytes) && ws.readyState === ws.OPEN) ws.close(CLOSE_CODES.tooMuch, closeReason(LIMIT_REASONS.early(limits.earlyMessages, limits.earlyBytes)))
    })
    const refuse = (code: keyof typeof CLOSE_CODES, reason: string) => ws.close(CLOSE_CODES[code], reason)
    if (!this.originAllowed(req)) return refuse('badOrigin', 'bad origin')
    const { auth, db } = this.services
    const sessionId = auth.readSessionCookie(req.headers.cookie ?? '')
    const { session, user } = sessionId ? await auth.validateSession(sessionId) : { session: null, user: null }
    const passCookie = readCookie(req.headers.cookie, GUEST_COOKIE)
    const pass = passCookie ? await findPassBySession(db, hashSecret(passCookie)) : undefined
    const member = session && user ? user : null
    if (!member && !pass) return refuse('unauthenticated', 'sign in first')
    const scene = await projectOfScene(db, sceneId)
    const membership = scene && member ? await findMembership(db, scene.project_id, member.id) : undefined
    // A member's own role decides; otherwise a pass for this scene's project makes a read-only guest.
    const guest = !membership && scene && pass && pass.project_id === scene.project_id ? pass : null
    const role = membership?.role ?? (guest ? 'guest' : null)
    // Not a member: the same answer as no such scene, so ids reveal nothing.
    if (!scene || !role) return refuse('forbidden', 'not a member of this scene')
    if (!can(role, 'view')) return refuse('forbidden', 'not allowed')
    const room = await this.room(sceneId, kind)
    // Held in memory while this socket is being admitted (a room nobody has open is unloaded after a while).
    room.pins++
    try {
      await this.admitTo(ws, room, { sceneId, kind, guest, member, session, role, projectId: scene.project_id }, early, (d) => (deliver = d))
    } finally {
      room.pins--
      this.unloadLater(sceneId, kind, room)
    }
  }

  /** The rest of admitting a socket, once its room is loaded and held. */
  private async admitTo(
    ws: WebSocket,
    room: Room,
    who: {
      sceneId: string
      kind: DocumentKind
      guest: NonNullable<Awaited<ReturnType<typeof findPassBySession>>> | null
      member: { id: string; name: string } | null
      session: { id: string } | null
      role: Connection['role']
      projectId: string
    },
    early: EarlyMessages,
    setDeliver: (deliver: (bytes: Uint8Array) => void) => void,
  ): Promise<void> {
    const { sceneId, kind, guest, member, session, role } = who
    const { auth, db } = this.services
    const limits = this.services.config.live
    const refuse = (code: keyof typeof CLOSE_CODES, reason: string) => ws.close(CLOSE_CODES[code], reason)
    const scene = { project_id: who.projectId }
    if (ws.readyState !== ws.OPEN) return
    if (guest) {
      this.holdPass(ws, guest.id, guest.expires_at)
      // A revoke between the check above and holding the socket would miss it: look once more.
      if (!(await findPassBySession(db, guest.session_hash!))) return refuse('forbidden', 'viewing pass revoked')
      if (ws.readyState !== ws.OPEN) return
    }
    const conn: Connection = {
      socket: ws,
      userId: guest ? null : member!.id,
      passId: guest?.id ?? null,
      name: guest ? guest.name : member!.name,
      writable: kind === 'work' && can(role, 'editMarkers'),
      clientId: null,
      awarenessTimes: [],
      projectId: scene.project_id,
      role,
      sessionId: guest ? null : hashSecret(session!.id),
      ended: null,
      budget: new ConnectionBudget(limits),
    }
    this.connections.add(conn)
    ws.on('close', () => this.connections.remove(conn))
    if (!guest) {
      // A removal or a role change between the check above and the registry would miss this socket: look again.
      const [now, still] = await Promise.all([findMembership(db, scene.project_id, member!.id), auth.validateSession(session!.id)])
      if (!still.session) return Room.end(conn, 'signedOut', 'signed out')
      if (now?.role !== role) return Room.end(conn, now ? 'roleChanged' : 'accessEnded', now ? `your role is now ${now.role}` : 'you are no longer a member of this project')
      if (ws.readyState !== ws.OPEN) return
    }
    room.connections.set(ws, conn)
    let chain = Promise.resolve()
    // One message at a time per connection, in order.
    const deliver = (bytes: Uint8Array) => {
      chain = chain.then(() => room.receive(conn, bytes)).catch((err) => this.log.warn({ err }, 'a live message was refused'))
    }
    setDeliver(deliver)
    ws.on('close', () => {
      room.leave(conn)
      this.unloadLater(sceneId, kind, room)
    })
    room.greet(conn)
    for (const bytes of early.take()) deliver(bytes)
  }

  /** Keeps a guest socket findable by its pass, and closes it when the pass expires. */
  private holdPass(ws: WebSocket, passId: string, expiresAt: Date): void {
    let set = this.passSockets.get(passId)
    if (!set) this.passSockets.set(passId, (set = new Set()))
    set.add(ws)
    // setTimeout holds at most 2^31 - 1 ms (about 24.8 days): a longer pass waits in steps.
    let timer: NodeJS.Timeout
    const arm = () => {
      const left = expiresAt.getTime() - Date.now()
      if (left <= 0) return ws.close(CLOSE_CODES.forbidden, 'viewing pass expired')
      timer = setTimeout(arm, Math.min(left, 2 ** 31 - 1))
      timer.unref()
    }
    arm()
    ws.on('close', () => {
      clearTimeout(timer)
      set.delete(ws)
      if (set.size === 0 && this.passSockets.get(passId) === set) this.passSockets.delete(passId)
    })
  }

  /** Closes every open socket of a viewing pass (revoked, or its guest left). */
  closePass(passId: string): void {
    for (const ws of this.passSockets.get(passId) ?? []) ws.close(CLOSE_CODES.forbidden, 'viewing pass revoked')
  }

  /**
   * The scene was deleted: everyone on its two documents is cut off at once (nothing more of theirs is
   * applied) with accessEnded, and its rooms are forgotten (their stored updates went with the scene).
   */
  closeScene(sceneId: string): void {
    for (const kind of ['work', 'record'] as const) {
      const key = `${sceneId}:${kind}`
      const room = this.rooms.get(key)
      if (!room) continue
      this.rooms.delete(key)
      clearTimeout(this.unloadTimers.get(key))
      this.unloadTimers.delete(key)
      void room.then(
        (r) => {
          for (const conn of r.connections.values()) Room.end(conn, 'accessEnded', 'this scene was deleted')
        },
        () => undefined,
      )
    }
  }

  private readonly unloadTimers = new Map<string, NodeJS.Timeout>()

  /**
   * A room nobody has open (and nobody is joining) is dropped from memory `config.live.unloadGraceMs` after
   * it was last used, once everything it took is stored; the next connection or API write loads it again from
   * PostgreSQL. Every use restarts the wait.
   */
  private unloadLater(sceneId: string, kind: DocumentKind, room: Room): void {
    if (room.connections.size > 0 || room.pins > 0) return
    const key = `${sceneId}:${kind}`
    clearTimeout(this.unloadTimers.get(key))
    const timer = setTimeout(() => {
      this.unloadTimers.delete(key)
      void this.unload(key, room).catch((err) => this.log.warn({ err, sceneId, doc: kind }, 'a live document could not be unloaded'))
    }, this.services.config.live.unloadGraceMs)
    timer.unref()
    this.unloadTimers.set(key, timer)
  }

  private async unload(key: string, room: Room): Promise<void> {
    const current = this.rooms.get(key)
    if (!current || (await current.catch(() => null)) !== room) return
    await room.flushed()
    if (room.connections.size > 0 || room.pins > 0 || this.rooms.get(key) !== current || this.unloadTimers.has(key)) return
    this.rooms.delete(key)
    room.destroy()
  }

  /**
   * Another process died: every document loaded here first catches up with all it stored, then is brought
   * in line with PostgreSQL (liveSync.ts `reconcile`), so a change it stored but had not mirrored, or a check
   * it stored but had not written into the record, is not lost.
   */
  async reconcileLoaded(): Promise<void> {
    for (const pending of [...this.rooms.values()]) {
      const room = await pending.catch(() => null)
      if (!room) continue
      try {
        await room.catchUp()
        await this.sync.reconcile(room)
      } catch (err) {
        this.log.error({ err, sceneId: room.sceneId, doc: room.kind }, 'a document could not be reconciled; its next load does it')
      }
    }
  }

  /** Is this document in memory now? (tests and the bench) */
  isLoaded(sceneId: string, kind: DocumentKind): boolean {
    return this.rooms.has(`${sceneId}:${kind}`)
  }

  /** The room of a scene's document, loaded once. */
  room(sceneId: string, kind: DocumentKind): Promise<Room> {
    const key = `${sceneId}:${kind}`
    let room = this.rooms.get(key)
    if (!room) {
      room = Room.load(this.services.db, sceneId, kind, this.log, this.services.config.live).then(async (loaded) => {
        loaded.onPresence = (update) => void this.fanout.presence(sceneId, kind, update).catch((err: unknown) => this.log.debug({ err }, 'presence not told to the other processes'))
        this.sync.watch(loaded)
        await this.sync.seed(loaded)
        return loaded
      })
      room.catch(() => this.rooms.delete(key))
      this.rooms.set(key, room)
    }
    // Used now (an API write, a socket joining): it stays in memory at least another grace period.
    void room.then((r) => this.unloadLater(sceneId, kind, r), () => undefined)
    return room
  }

  /** Closes every connection (going away) once every stored update has been sent. */
  async close(): Promise<void> {
    await this.fanout.stop()
    for (const room of this.rooms.values()) {
      const r = await room.catch(() => null)
      if (!r) continue
      await r.flushed()
      for (const socket of r.connections.keys()) socket.close(CLOSE_CODES.goingAway, 'server stopping')
    }
    this.wss.close()
  }
}
