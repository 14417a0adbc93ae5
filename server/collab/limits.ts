import type { WebSocket } from 'ws'

/**
 * What one live connection may cost the server (README, "Security and limits"). Every cap closes the
 * socket with CLOSE_CODES.tooMuch and a reason naming the cap; the page waits a moment and reconnects.
 *
 * - `syncRequestsPerSecond`: sync step 1 messages (each is answered with the document's missing part, so
 *   a flood of them is a flood of answers).
 * - `writesPerSecond`, `writeBytes`: update and sync step 2 messages of any connection (a writer's edits
 *   come a few a second; a read-only connection's are refused anyway).
 * - `earlyMessages`, `earlyBytes`: what a socket may send while its sign-in and membership are still being
 *   checked (held until then).
 * - `backlogBytes`, `backlogMs`: a socket whose unsent data (`ws.bufferedAmount`) stays over the bytes for
 *   the time (a client that does not read) is cut off, so the server never holds an unbounded queue for it.
 * - `readOnlyBaseBytes`, `readOnlyStateVectorFactor`: a read-only connection legitimately sends only its
 *   sync request (its state vector, which grows with every writer session the document has seen) and its
 *   presence; a message longer than the base plus the factor times the document's own state vector is
 *   abuse.
 * - `unloadGraceMs`: a document nobody has open is dropped from memory after this long (everything it
 *   took is stored before; it loads again from PostgreSQL on the next connection).
 */
export interface LiveLimits {
  syncRequestsPerSecond: number
  writesPerSecond: number
  writeBytes: number
  earlyMessages: number
  earlyBytes: number
  backlogBytes: number
  backlogMs: number
  readOnlyBaseBytes: number
  readOnlyStateVectorFactor: number
  unloadGraceMs: number
}

export const PRODUCTION_LIVE_LIMITS: LiveLimits = {
  syncRequestsPerSecond: 10,
  writesPerSecond: 60,
  writeBytes: 1024 * 1024,
  earlyMessages: 16,
  earlyBytes: 256 * 1024,
  backlogBytes: 8 * 1024 * 1024,
  backlogMs: 10_000,
  readOnlyBaseBytes: 4096,
  readOnlyStateVectorFactor: 4,
  unloadGraceMs: 30_000,
}

/** At most `perSecond` events in any one-second window (the times kept are at most `perSecond`). */
export class RateWindow {
  private readonly times: number[] = []

  constructor(private readonly perSecond: number) {}

  /** Counts one event at `now` (ms); false when it is one too many. */
  take(now: number): boolean {
    while (this.times.length > 0 && now - this.times[0]! >= 1000) this.times.shift()
    if (this.times.length >= this.perSecond) return false
    this.times.push(now)
    return true
  }
}

/** One connection's counters. */
export class ConnectionBudget {
  readonly syncs: RateWindow
  readonly writes: RateWindow

  constructor(readonly limits: LiveLimits) {
    this.syncs = new RateWindow(limits.syncRequestsPerSecond)
    this.writes = new RateWindow(limits.writesPerSecond)
  }

  /** The longest message a read-only connection may send, given the document's state vector length. */
  readOnlyCap(stateVectorBytes: number): number {
    return this.limits.readOnlyBaseBytes + this.limits.readOnlyStateVectorFactor * stateVectorBytes
  }
}

/** Why a cap was reached, as the close reason says it. */
export const LIMIT_REASONS = {
  syncRequests: (n: number) => `more than ${n} sync requests a second`,
  writes: (n: number) => `more than ${n} changes a second`,
  writeBytes: (n: number) => `a change larger than ${n} bytes`,
  early: (n: number, bytes: number) => `more than ${n} messages or ${bytes} bytes before sign-in was checked`,
  backlog: (bytes: number, ms: number) => `over ${bytes} bytes unread for ${ms / 1000} s`,
  readOnly: (n: number) => `a message of ${n} bytes from a read-only connection`,
}

/**
 * Messages a socket sends before it is admitted, held within a count and byte cap; `push` answers false
 * once the cap is passed (the caller closes the socket and drops what was held).
 */
export class EarlyMessages {
  private readonly held: Uint8Array[] = []
  private bytes = 0

  constructor(private readonly limits: LiveLimits) {}

  push(message: Uint8Array): boolean {
    this.bytes += message.byteLength
    if (this.held.length >= this.limits.earlyMessages || this.bytes > this.limits.earlyBytes) {
      this.held.length = 0
      return false
    }
    this.held.push(message)
    return true
  }

  take(): Uint8Array[] {
    return this.held.splice(0)
  }
}

/**
 * Watches a socket's unsent data after each send: once it is over `backlogBytes`, it is looked at again
 * after `backlogMs`, and a socket still over then is cut off (`terminate`: a close frame would only queue
 * behind the backlog).
 */
export function watchBacklog(socket: WebSocket, limits: LiveLimits, onOver: () => void): void {
  if (socket.bufferedAmount <= limits.backlogBytes) return
  const watched = socket as WebSocket & { backlogTimer?: NodeJS.Timeout }
  if (watched.backlogTimer) return
  watched.backlogTimer = setTimeout(() => {
    watched.backlogTimer = undefined
    if (socket.readyState === socket.OPEN && socket.bufferedAmount > limits.backlogBytes) onOver()
  }, limits.backlogMs)
  watched.backlogTimer.unref()
  socket.once('close', () => clearTimeout(watched.backlogTimer))
}
