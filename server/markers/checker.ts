import { Stop } from './checkParts'
import { readObjectPoints, sceneCutFilters } from './objectPoints'
import type pino from 'pino'
import type { Check } from '@shared/schemas'
import type { Db } from '../db'
import { findMarkerSettings } from '../repositories/projects'
import { checkHold, findMarker, holdCheck, pendingMarkersOfProject, projectsOfMarkers, storeCheck, takeOrphanedChecks, type StoredAnchor } from '../repositories/markers'
import { listInstances, projectOfScene } from '../repositories/scenes'
import { findScan } from '../repositories/scans'
import { registrationStates } from '../registration/current'
import { parseStoredCheck } from '../services/mappers'
import type { ScanIndexes } from '../types'
import { checkMarker, type CheckContext, type CheckInput, type CheckPlacement, type CheckScan } from './check'

/** How soon a check waiting for a scan to finish processing is tried again. */
const RETRY_MS = 2000
/** After a fault of the server's own: the first retry, doubled each time up to the longest. */
const FAULT_RETRY_MS = 1000
const FAULT_RETRY_MAX_MS = 60_000

/**
 * Runs marker checks and stores their results. Latest wins: a check stores only if the marker still has the
 * revision it was computed for (a conditional update), and a check whose marker moved on meanwhile stops at
 * its next cancellation point.
 *
 * Background checks run one at a time, taking the projects in turn (one project's thousand re-checks do
 * not hold up another's one). A project holds at most `limits.queuedPerProject` checks in the queue; the
 * rest are not lost: their markers stay pending in PostgreSQL (every scheduled marker is), and once the
 * project's queue has emptied they are read back from there, oldest change first.
 *
 * Several server processes share the work (server/jobs/leases.ts): a check runs only in the process holding
 * the marker's pending check (`markers.check_owner`, taken by `holdCheck` before the check), and is stored
 * only while that process still holds it; a marker another live process holds is left to it (that process
 * checks again if the revision moved on meanwhile). Every process sweeps (`sweep`) for pending markers with
 * no live holder (their process died, or nobody took them) and takes them over, so a check is done once,
 * and never not at all.
 */
export class MarkerChecker {
  /** Newest revision asked for per marker. */
  private readonly wanted = new Map<string, number>()
  /** Told of every stored check (the record document). */
  onStored: ((sceneId: string, markerId: string) => Promise<void>) | null = null
  /** Asked for, project not yet known. */
  private readonly incoming = new Set<string>()
  /** Per project, in the order asked; the map's order is the turn order. */
  private readonly queues = new Map<string, string[]>()
  private readonly queued = new Set<string>()
  /** Projects with pending markers left out of the queue (it was full). */
  private readonly overflow = new Set<string>()
  private running: Promise<void> | null = null

  constructor(
    private readonly db: Db,
    private readonly points: ScanIndexes,
    private readonly log: pino.Logger,
    private readonly limits: { checkPoints: number; queuedPerProject: number } = { checkPoints: Infinity, queuedPerProject: Infinity },
    /** This process's id and the lease timing (server/jobs/leases.ts); `testDelayMs`: tests hold a check this long. */
    private readonly lease: { owner: string; leaseMs: number; testDelayMs?: number },
  ) {}

  /** Checks waiting in the queue for a project (diagnostics and tests). */
  queuedFor(projectId: string): number {
    return this.queues.get(projectId)?.length ?? 0
  }

  /**
   * Checks now and stores; returns the check (also when it was superseded and not stored), or null when the
   * marker is gone or a fault of the server's own (reading the points, the database) kept it pending: then
   * it is tried again by itself, less often each time (and on restart).
   */
  async checkNow(markerId: string): Promise<Check | null> {
    try {
      const check = await this.checkOnce(markerId)
      this.faults.delete(markerId)
      return check
    } catch (err) {
      this.faulted(markerId, err)
      return null
    }
  }

  private async checkOnce(markerId: string): Promise<Check | null> {
    const { owner, leaseMs } = this.lease
    const held = await holdCheck(this.db, markerId, owner, leaseMs)
    if (!held) {
      // Not pending, gone, or held by another live process (it stores the check, and checks again if the
      // revision moved on): nothing to do here.
      const row = await findMarker(this.db, markerId)
      if (!row) return null
      if (this.wanted.get(markerId) === row.revision) this.wanted.delete(markerId)
      return row.check_state === 'pending' ? null : parseStoredCheck(row.check, row.check_state, row.revision)
    }
    const row = await findMarker(this.db, markerId)
    if (!row) return null
    this.want(markerId, row.revision)
    const input: CheckInput = { kind: row.kind, anchors: row.anchors as StoredAnchor[], params: row.params as Record<string, unknown>, revision: row.revision }
    const ctx = await this.context(row.scene_id)
    ctx.cancelled = () => (this.wanted.get(markerId) ?? 0) > row.revision
    const started = performance.now()
    if (this.lease.testDelayMs) await new Promise((r) => setTimeout(r, this.lease.testDelayMs))
    const check = await checkMarker(input, ctx)
    this.log.debug({ markerId, revision: row.revision, state: check.state, ms: Math.round(performance.now() - started) }, 'marker checked')
    if (check.state === 'pending') {
      // A scan it needs is still being processed: try again shortly (nothing is stored meanwhile; the hold stays).
      this.retrySoon(markerId, row.revision)
      return check
    }
    const stored = await storeCheck(this.db, markerId, row.revision, check.state, check, owner)
    if (stored && this.wanted.get(markerId) === row.revision) this.wanted.delete(markerId)
    if (stored) await this.onStored?.(row.scene_id, markerId)
    else await this.afterUnstored(markerId, row.revision)
    return check
  }

  /**
   * A check not stored: its revision moved on (through another process too, which left the check to this
   * one as the holder), or the hold was taken over (this process stalled past its lease). Still held here
   * and pending with a newer revision: it is checked again.
   */
  private async afterUnstored(markerId: string, revision: number): Promise<void> {
    const now = await checkHold(this.db, markerId)
    if (now && now.check_state === 'pending' && now.check_owner === this.lease.owner && now.revision > revision) this.schedule([{ id: markerId, revision: now.revision }])
  }

  /**
   * Takes over pending checks no live process holds (their holder died; or nobody took them within
   * `graceMs`) and queues them here. Every process runs it every few seconds (runtime.ts); returns how many.
   */
  async sweep(graceMs: number): Promise<number> {
    const taken = await takeOrphanedChecks(this.db, this.lease.owner, this.lease.leaseMs, graceMs, Math.min(500, Math.max(1, this.limits.queuedPerProject) * 4))
    this.schedule(taken)
    return taken.length
  }

  /** Not a property of the marker: it stays pending, and the check is asked again after a growing pause. */
  private faulted(markerId: string, err: unknown): void {
    const attempt = (this.faults.get(markerId) ?? 0) + 1
    this.faults.set(markerId, attempt)
    const delay = Math.min(FAULT_RETRY_MS * 2 ** (attempt - 1), FAULT_RETRY_MAX_MS)
    this.log.error({ err, markerId, attempt, retryInMs: delay }, 'marker check failed; the marker stays pending and is tried again')
    const timer = setTimeout(() => {
      this.faultTimers.delete(timer)
      this.schedule([{ id: markerId, revision: this.wanted.get(markerId) ?? 0 }])
    }, delay)
    timer.unref()
    this.faultTimers.add(timer)
  }

  /** Queues checks in the background (a placement moved, settings changed, the server started). */
  schedule(markers: readonly { id: string; revision: number }[]): void {
    for (const m of markers) {
      this.want(m.id, m.revision)
      if (!this.queued.has(m.id)) this.incoming.add(m.id)
    }
    if (!this.running && this.incoming.size) this.running = this.drain()
  }

  /** Resolves when the background queue is empty (tests, shutdown). */
  async idle(): Promise<void> {
    while (this.running) await this.running
  }

  private retryTimer: NodeJS.Timeout | null = null
  /** Faults in a row per marker, and the timers of their retries. */
  private readonly faults = new Map<string, number>()
  private readonly faultTimers = new Set<NodeJS.Timeout>()
  private readonly deferred = new Map<string, number>()

  private retrySoon(id: string, revision: number): void {
    this.deferred.set(id, revision)
    if (this.retryTimer) return
    this.retryTimer = setTimeout(() => {
      this.retryTimer = null
      const again = [...this.deferred].map(([id, revision]) => ({ id, revision }))
      this.deferred.clear()
      this.schedule(again)
    }, RETRY_MS)
    this.retryTimer.unref()
  }

  /** Stops the retry timers (shutdown). */
  stop(): void {
    if (this.retryTimer) clearTimeout(this.retryTimer)
    this.retryTimer = null
    this.deferred.clear()
    for (const timer of this.faultTimers) clearTimeout(timer)
    this.faultTimers.clear()
  }

  private want(id: string, revision: number): void {
    this.wanted.set(id, Math.max(this.wanted.get(id) ?? 0, revision))
  }

  private async drain(): Promise<void> {
    try {
      for (;;) {
        if (this.incoming.size) await this.sortIncoming()
        const next = this.nextInTurn()
        if (!next) break
        this.queued.delete(next.id)
        await this.checkNow(next.id)
        if (!this.queues.has(next.projectId) && this.overflow.has(next.projectId)) {
          await this.refill(next.projectId).catch((err: unknown) => {
            // They stay pending in PostgreSQL; the next check of the project (or a restart) reads them back.
            this.overflow.add(next.projectId)
            this.log.error({ err, projectId: next.projectId }, 'pending checks could not be read back; tried again later')
          })
        }
      }
    } finally {
      this.running = null
    }
    // Asked for while the last check ran.
    if (this.incoming.size && !this.running) this.running = this.drain()
  }

  /** Puts what was asked for into its project's queue, as far as the project's cap allows. */
  private async sortIncoming(): Promise<void> {
    const ids = [...this.incoming]
    this.incoming.clear()
    const rows = await projectsOfMarkers(this.db, ids).catch((err: unknown) => {
      // The database did not answer: ask again in a moment, nothing dropped.
      for (const id of ids) this.faulted(id, err)
      return []
    })
    for (const { id, project_id: projectId } of rows) {
      if (this.queued.has(id)) continue
      const queue = this.queues.get(projectId) ?? []
      if (queue.length >= this.limits.queuedPerProject) {
        this.overflow.add(projectId)
        continue
      }
      queue.push(id)
      this.queued.add(id)
      this.queues.set(projectId, queue)
    }
  }

  /** The first project in turn gives one check and goes to the back of the line. */
  private nextInTurn(): { id: string; projectId: string } | null {
    const first = this.queues.entries().next()
    if (first.done) return null
    const [projectId, queue] = first.value
    const id = queue.shift()!
    this.queues.delete(projectId)
    if (queue.length) this.queues.set(projectId, queue)
    return { id, projectId }
  }

  /** The project's queue has emptied: its markers left out meanwhile come back from PostgreSQL. */
  private async refill(projectId: string): Promise<void> {
    this.overflow.delete(projectId)
    const cap = this.limits.queuedPerProject
    const waiting = (id: string) => this.deferred.has(id) || this.faults.has(id) || this.queued.has(id)
    const rows = await pendingMarkersOfProject(this.db, projectId, cap + 1 + this.deferred.size + this.faults.size)
    const again = rows.filter((r) => !waiting(r.id)).slice(0, cap + 1)
    // One more than fits: there are more to read back after these.
    if (again.length > cap) this.overflow.add(projectId)
    for (const r of again.slice(0, cap)) {
      this.want(r.id, r.revision)
      this.incoming.add(r.id)
    }
    if (again.length) this.log.debug({ projectId, markers: again.length }, 'checks of a full queue read back')
  }

  private async context(sceneId: string): Promise<CheckContext> {
    const instances = await listInstances(this.db, sceneId)
    const registered = await registrationStates(this.db, sceneId, instances)
    const placements = new Map<string, CheckPlacement>()
    const scans = new Map<string, CheckScan>()
    const cuts = await sceneCutFilters(this.db, instances.map((i) => i.id))
    for (const i of instances) {
      const keep = cuts.get(i.id)
      placements.set(i.id, { matrix: i.matrix, scanId: i.scan_id, registrationU: registered.get(i.id)?.current?.u ?? 0, ...(keep ? { keep } : {}) })
      if (!scans.has(i.scan_id)) {
        const scan = await findScan(this.db, i.scan_id)
        if (scan) scans.set(i.scan_id, { name: scan.name, status: scan.status, spacing: scan.spacing, pointUncertainty: scan.entered_uncertainty ?? scan.estimated_uncertainty })
      }
    }
    const projectId = (await projectOfScene(this.db, sceneId))?.project_id ?? ''
    const settings = await findMarkerSettings(this.db, projectId)
    return {
      maxPoints: this.limits.checkPoints,
      placements,
      scans,
      settings: { anchorTolerance: settings?.anchor_tolerance ?? null, requiredMargin: settings?.required_margin ?? 0.05 },
      points: this.points,
      marker: async (id) => {
        const m = await findMarker(this.db, id)
        if (!m || m.scene_id !== sceneId) return undefined
        return { kind: m.kind, anchors: m.anchors as StoredAnchor[], params: m.params as Record<string, unknown>, revision: m.revision }
      },
      objectPoints: async (target, options = {}) => {
        const read = await readObjectPoints({ db: this.db, points: this.points }, sceneId, typeof target === 'string' ? { objectId: target } : target, { maxPoints: this.limits.checkPoints, ...options })
        if ('problem' in read) throw new Stop(read.state, read.problem)
        const memberScans = read.members.map((m) => scans.get(m.scanId))
        return {
          name: read.name,
          points: read.points,
          around: read.around,
          members: read.members.map((m) => ({ instanceId: m.instanceId, scanName: m.scanName, registrationU: placements.get(m.instanceId)?.registrationU ?? 0, stored: m.stored, kept: m.kept })),
          pointUncertainty: Math.max(0, ...memberScans.map((s) => s?.pointUncertainty ?? 0)),
          spacing: Math.max(0, ...memberScans.map((s) => s?.spacing ?? 0)),
          strayDropped: read.stray?.dropped ?? 0,
        }
      },
    }
  }
}
