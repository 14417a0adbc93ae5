import { sceneCutsOf } from '../markers/objectPoints'
import { keepsPoint } from '@shared/measure/trims'
import { randomUUID } from 'node:crypto'
import { IDENTITY, invertRigid, multiplyRigid, rigidProblem, transformPoint, type Matrix4 } from '@shared/geometry/rigidTransform'
import { fitSphereKnownRadius } from '@shared/geometry/sphereFit'
import { symmetricEigen3 } from '@shared/geometry/symmetricEigen3'
import { fitRigid } from '@shared/measure/registration'
import { registrationUncertainty, type RegistrationFigure } from '@shared/measure/uncertainty'
import {
  REFINE_LIMITS,
  RegistrationFitBody,
  RegistrationRefineBody,
  type FitResult,
  type PlacementRegistration,
  type RefineResult,
  type Registration,
  type RegistrationReport,
  type TiePair,
  type TieSide,
  type TieSummary,
  type Vec3,
} from '@shared/schemas'
import { ErrorCode } from '@shared/schemas/common'
import type { z } from 'zod'
import { HttpError } from '../errors'
import { toleranceFor } from '../markers/check'
import { registrationStates, sameMatrix } from '../registration/current'
import { refineIcp } from '../registration/icp'
import { findMarkerSettings } from '../repositories/projects'
import * as repo from '../repositories/registrations'
import { findScan } from '../repositories/scans'
import { findInstance, listInstances, projectOfScene, type InstanceRow } from '../repositories/scenes'
import type { Services } from '../types'
import { editInstance } from './scenes'

/**
 * Aligning stations (issue "align stations"): one door for the API (and, through the scene service, the live
 * documents). A fit snaps each tie point to the stored points as markers' anchors are snapped (or fits the
 * sphere target around it), runs the closed form of shared/measure/registration.ts and keeps the result as a
 * draft; a refinement runs ICP (server/registration/icp.ts) as a job in this process (latest wins per
 * scene, server/registration/jobs.ts); accepting sets the moving placement's matrix through
 * services/scenes.ts editInstance (so it is live for everyone and every marker on it is checked again);
 * undoing sets the earlier matrix back, as a change and a record of its own.
 *
 * Frames: tie points arrive in the scene frame; each side is stored in its placement's own frame as well
 * (`local`). A correction C is a scene-frame matrix mapping the moving placement's points onto the held
 * one's; accepting turns the placement's matrix P into C P. ICP works in the two scans' own frames (its
 * header): start inverse(P_held) C P_moving, result M, so the refined correction is P_held M inverse(P_moving).
 */

type FitInput = z.output<typeof RegistrationFitBody>
type RefineInput = z.output<typeof RegistrationRefineBody>
type StoredPair = Omit<TiePair, 'residual' | 'distance'>
type StoredFit = FitResult
type StoredIcp = RefineResult

const HELD_IN_FIELD = 'heldInstanceId'
/** Refining from the placement as it is (no fit): pairs farther than this are outliers, metres. */
const DEFAULT_MAX_DISTANCE = 0.1
/** ICP iteration figures are written at most this often while running (the poll reads them). */
const PROGRESS_MS = 250

function invalid(field: string, message: string): HttpError {
  return new HttpError(400, ErrorCode.invalidInput, `body.${field}: ${message}`, field)
}

const mm = (m: number) => `${(m * 1000).toFixed(1)} mm`

// ---------------------------------------------------------------------------------------------------------
// Mapping rows to the API.

function toRegistration(row: repo.RegistrationRow): Registration {
  const stored = (row.pairs ?? []) as StoredPair[]
  const correction = row.correction
  const pairs: TiePair[] = stored.map((p) => {
    if (!p.enabled || !correction) return { ...p, residual: null, distance: null }
    const r = residualOf(correction, p)
    return { ...p, residual: r, distance: Math.hypot(...r) }
  })
  const person = (id: string | null, name: string | null) => (id && name ? { id, name } : null)
  return {
    id: row.id,
    sceneId: row.scene_id,
    kind: row.kind,
    state: row.state,
    movingInstanceId: row.moving_instance_id,
    heldInstanceId: row.held_instance_id,
    movingName: row.moving_name,
    heldName: row.held_name,
    pairs,
    fit: (row.fit as StoredFit | null) ?? null,
    refine: (row.icp as StoredIcp | null) ?? null,
    residuals: correction && stored.length ? tieSummary(stored, correction) : null,
    correction,
    rms: row.rms,
    rmsSource: row.rms_source,
    registrationU: row.registration_u,
    matrixBefore: row.matrix_before,
    heldMatrix: row.held_matrix,
    matrixAfter: row.matrix_after,
    undoesId: row.undoes_id,
    createdBy: person(row.created_by, row.created_by_name),
    createdAt: row.created_at.toISOString(),
    acceptedBy: person(row.accepted_by, row.accepted_by_name),
    acceptedAt: row.accepted_at?.toISOString() ?? null,
    undoneBy: person(row.undone_by, row.undone_by_name),
    undoneAt: row.undone_at?.toISOString() ?? null,
  }
}

function residualOf(c: Matrix4, p: StoredPair): Vec3 {
  const [x, y, z] = transformPoint(c, ...p.moving.point)
  return [x - p.held.point[0], y - p.held.point[1], z - p.held.point[2]]
}

/** The enabled pairs' residuals under a correction: fitted pairs and check points apart. */
function tieSummary(pairs: readonly StoredPair[], c: Matrix4): TieSummary {
  let sum = 0, max = 0, count = 0, checkSum = 0, checkMax = 0, checkCount = 0
  for (const p of pairs) {
    if (!p.enabled) continue
    const d = Math.hypot(...residualOf(c, p))
    if (p.checkPoint) {
      checkSum += d * d
      checkMax = Math.max(checkMax, d)
      checkCount++
    } else {
      sum += d * d
      max = Math.max(max, d)
      count++
    }
  }
  return {
    rms: count ? Math.sqrt(sum / count) : null,
    max: count ? max : null,
    count,
    checkRms: checkCount ? Math.sqrt(checkSum / checkCount) : null,
    checkMax: checkCount ? checkMax : null,
    checkCount,
  }
}

/**
 * The placement's registration RMS and which figure it is: held-out check points when there are any (they
 * show accuracy, the fitted pairs only consistency: ASPRS Positional Accuracy Standards, Ed. 2, 2023), else
 * ICP's point-to-plane RMS once refined, else the fitted tie pairs' RMS. The per-axis standard uncertainty
 * for anchor budgets follows from it by registrationUncertainty (shared/measure/uncertainty.ts).
 */
export function rmsFigure(summary: TieSummary | null, icp: StoredIcp | null): RegistrationFigure | null {
  if (summary && summary.checkCount > 0 && summary.checkRms !== null) return { source: 'check-points', rms: summary.checkRms, count: summary.checkCount }
  if (icp && icp.status === 'done' && icp.matrix && icp.finalRms !== null) return { source: 'icp', rms: icp.finalRms, count: icp.iterations.at(-1)?.fitted ?? 0 }
  if (summary && summary.rms !== null) return { source: 'tie-points', rms: summary.rms, count: summary.count }
  return null
}

function figureColumns(figure: RegistrationFigure | null) {
  return { rms: figure?.rms ?? null, rms_source: figure?.source ?? null, registration_u: figure ? registrationUncertainty(figure) : null }
}

export async function getRegistration(s: Services, id: string): Promise<Registration> {
  const row = await repo.findRegistration(s.db, id)
  if (!row) throw HttpError.notFound('No such registration.')
  return toRegistration(row)
}

// ---------------------------------------------------------------------------------------------------------
// The placements and their scans.

interface Side {
  instance: InstanceRow
  scan: NonNullable<Awaited<ReturnType<typeof findScan>>>
}

async function sideOf(s: Services, sceneId: string, instanceId: string, field: string): Promise<Side> {
  const instance = await findInstance(s.db, instanceId)
  if (!instance || instance.scene_id !== sceneId) throw invalid(field, 'no placement with this id in the scene.')
  const scan = await findScan(s.db, instance.scan_id)
  if (!scan || scan.status !== 'ready') throw new HttpError(409, ErrorCode.conflict, `body.${field}: the scan "${instance.scan_name}" is ${scan?.status ?? 'gone'}; only a ready scan can be aligned.`, field)
  return { instance, scan }
}

async function placementPair(s: Services, sceneId: string, movingId: string, heldId: string): Promise<{ moving: Side; held: Side }> {
  const moving = await sideOf(s, sceneId, movingId, 'movingInstanceId')
  if (heldId === movingId) throw invalid(HELD_IN_FIELD, 'the held placement must be another placement than the one that moves.')
  const held = await sideOf(s, sceneId, heldId, HELD_IN_FIELD)
  return { moving, held }
}

async function settingsOf(s: Services, sceneId: string) {
  const projectId = (await projectOfScene(s.db, sceneId))?.project_id ?? ''
  const row = await findMarkerSettings(s.db, projectId)
  return { anchorTolerance: row?.anchor_tolerance ?? null, requiredMargin: row?.required_margin ?? 0.05 }
}

/** One side of a tie pair: snapped to the nearest stored point (refused off the points), or a sphere's centre. */
async function snapSide(s: Services, side: Side, picked: Vec3, field: string, target: 'point' | 'sphere', radius: number, settings: Awaited<ReturnType<typeof settingsOf>>): Promise<TieSide> {
  const { instance, scan } = side
  const [lx, ly, lz] = transformPoint(invertRigid(instance.matrix), ...picked)
  const cuts = (await sceneCutsOf(s.db, [instance.id])).get(instance.id)
  const found = await s.scanIndexes.snap(scan.id, lx, ly, lz, cuts ? keepsPoint(cuts) : undefined)
  if (!found) throw invalid(field, `the scan "${instance.scan_name}" has no stored points.`)
  const tolerance = toleranceFor(settings, scan.spacing)
  if (found.distance > tolerance) {
    throw invalid(field, `${mm(found.distance)} from the nearest stored point of "${instance.scan_name}" (tolerance ${mm(tolerance)}): pick a tie point on the points.`)
  }
  let local: Vec3 = [found.x, found.y, found.z]
  let sphere: TieSide['sphere'] = null
  if (target === 'sphere') {
    // The visible cap lies within sqrt(2) R of any point on it; 1.5 R gathers it and stays clear of a wall
    // or bracket a little farther off.
    const around = await s.scanIndexes.nearest(scan.id, found.x, found.y, found.z, 8192, 1.5 * radius)
    const xyz = new Float64Array(around.length * 3)
    around.forEach((p, i) => xyz.set([p.x, p.y, p.z], 3 * i))
    const fit = fitSphereKnownRadius(xyz, radius)
    if (!fit.ok) throw invalid(field, `no sphere target of radius ${mm(radius)} around this point on "${instance.scan_name}": ${fit.message}.`)
    local = fit.centre
    sphere = { radius: fit.radius, rms: fit.rms, count: fit.count }
  }
  return { picked, point: transformPoint(instance.matrix, ...local), local, distance: found.distance, tolerance, sphere }
}

// ---------------------------------------------------------------------------------------------------------
// Fit.

/** The closed-form fit of the tie pairs, kept as a draft (it replaces the caller's earlier drafts for the placement). */
export async function fitRegistration(s: Services, sceneId: string, body: FitInput, userId: string | null): Promise<Registration> {
  const { moving, held } = await placementPair(s, sceneId, body.movingInstanceId, body.heldInstanceId)
  const settings = await settingsOf(s, sceneId)
  const pairs: StoredPair[] = []
  for (const [i, p] of body.pairs.entries()) {
    const radius = body.sphereRadius
    const m = await snapSide(s, moving, [p.moving.x, p.moving.y, p.moving.z], `pairs.${i}.moving`, p.target, radius, settings)
    const h = await snapSide(s, held, [p.held.x, p.held.y, p.held.z], `pairs.${i}.held`, p.target, radius, settings)
    pairs.push({ moving: m, held: h, checkPoint: p.checkPoint, enabled: p.enabled, target: p.target })
  }
  lineProblem(pairs)
  const result = fitRigid(
    pairs.map((p) => ({ moving: p.moving.point, held: p.held.point, checkPoint: p.checkPoint, enabled: p.enabled })),
    body.method,
  )
  if (!result.ok) {
    const field = result.pairIndex !== null ? `pairs.${result.pairIndex}${result.side ? `.${result.side}` : ''}` : 'pairs'
    throw invalid(field, `${result.message}.`)
  }
  const fit: StoredFit = {
    method: result.method,
    matrix: result.matrix,
    quaternion: result.quaternion,
    rotationDegrees: result.rotationDegrees,
    translation: result.translation,
    rms: result.rms,
    max: result.max,
    count: result.count,
    checkRms: result.checkRms,
    checkMax: result.checkMax,
    checkCount: result.checkCount,
  }
  const summary = tieSummary(pairs, result.matrix)
  const { id } = await repo.insertRegistration(s.db, {
    sceneId,
    movingInstanceId: moving.instance.id,
    heldInstanceId: held.instance.id,
    movingName: moving.instance.scan_name,
    heldName: held.instance.scan_name,
    method: result.method,
    pairs,
    fit: fit as unknown as Record<string, unknown>,
    correction: result.matrix,
    ...camel(figureColumns(rmsFigure(summary, null))),
    matrixBefore: moving.instance.matrix,
    heldMatrix: held.instance.matrix,
    matrixAfter: multiplyRigid(result.matrix, moving.instance.matrix),
    userId,
  })
  await dropEarlierDrafts(s, sceneId, moving.instance.id, userId, id)
  return getRegistration(s, id)
}

/**
 * Tie points that lie on one line to within the picking tolerance leave the turn about that line to the
 * pick noise: refused like the exactly collinear set fitRigid refuses, with the tolerance as the test (as a
 * section's three points are, server/markers/check.ts). The spread off the line is the RMS distance from
 * the best line (the middle principal axis of the points' scatter).
 */
function lineProblem(pairs: readonly StoredPair[]): void {
  const fitted = pairs.filter((p) => p.enabled && !p.checkPoint)
  if (fitted.length < 3) return
  for (const side of ['moving', 'held'] as const) {
    const pts = fitted.map((p) => p[side].point)
    const c = [0, 1, 2].map((a) => pts.reduce((sum, p) => sum + p[a]!, 0) / pts.length)
    let xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0
    for (const p of pts) {
      const dx = p[0] - c[0]!, dy = p[1] - c[1]!, dz = p[2] - c[2]!
      xx += dx * dx; xy += dx * dy; xz += dx * dz
      yy += dy * dy; yz += dy * dz; zz += dz * dz
    }
    const n = pts.length
    const e = symmetricEigen3(xx / n, xy / n, xz / n, yy / n, yz / n, zz / n, { values: new Float64Array(3), vectors: new Float64Array(9) })
    const off = Math.sqrt(Math.max(0, e.values[1]!))
    const tolerance = Math.max(...fitted.map((p) => p[side].tolerance))
    if (off <= tolerance) {
      throw invalid('pairs', `the ${side} tie points lie on one line to within ${mm(off)} (the picking tolerance is ${mm(tolerance)}), so the turn about it is not determined: add a pair off that line.`)
    }
  }
}

function camel(c: ReturnType<typeof figureColumns>) {
  return { rms: c.rms, rmsSource: c.rms_source, registrationU: c.registration_u }
}

async function dropEarlierDrafts(s: Services, sceneId: string, movingId: string, userId: string | null, keep: string): Promise<void> {
  for (const r of await repo.listDrafts(s.db, sceneId, movingId, userId, keep)) await s.registrationJobs.cancel(r.id, 'replaced by a newer fit')
  await repo.deleteDrafts(s.db, sceneId, movingId, userId, keep)
}

// ---------------------------------------------------------------------------------------------------------
// Refine (ICP as a job).

/**
 * ICP's outlier distance when refining a fit: enough for the fit's own misalignment (three times its largest
 * residual) plus three times the two scans' combined point noise, and at least one point spacing (a true
 * partner on a surface lies up to about a spacing away sideways). Tighter than that stays clear of the
 * wrong partners near edges and thin parts, which pull ICP off by millimetres: on the demo's stations a
 * 55 mm limit left 1.6 mm of error at the targets, 15 mm 0.6 mm (measured, server/demo). From the placement
 * as it is (no fit) the misalignment is unknown: 0.1 m, or what the person sets.
 */
function defaultMaxDistance(fit: StoredFit | null, spacing: number, noise: number): number {
  if (!fit) return DEFAULT_MAX_DISTANCE
  const limits = REFINE_LIMITS.maxDistance
  return Math.min(limits.max, Math.max(limits.min, 3 * Math.max(fit.max ?? 0, fit.checkMax ?? 0) + 3 * noise, spacing))
}

/** Starts ICP on a draft (from its fit) or on a new draft (from the placement as it is); answers at once. */
export async function startRefine(s: Services, sceneId: string, body: RefineInput, userId: string | null): Promise<Registration> {
  const { moving, held } = await placementPair(s, sceneId, body.movingInstanceId, body.heldInstanceId)
  let id: string
  let fit: StoredFit | null = null
  if (body.registrationId) {
    const row = await repo.findRegistration(s.db, body.registrationId)
    if (!row || row.scene_id !== sceneId || row.state !== 'draft') throw invalid('registrationId', 'no draft registration with this id in the scene (fit again).')
    if (row.moving_instance_id !== moving.instance.id || row.held_instance_id !== held.instance.id) throw invalid('registrationId', 'that registration aligns other placements.')
    if (!sameMatrix(row.matrix_before, moving.instance.matrix) || !sameMatrix(row.held_matrix, held.instance.matrix)) {
      throw HttpError.conflict('A placement has moved since this fit: fit the tie points again.', 'registrationId')
    }
    id = row.id
    fit = (row.fit as StoredFit | null) ?? null
  } else {
    const made = await repo.insertRegistration(s.db, {
      sceneId,
      movingInstanceId: moving.instance.id,
      heldInstanceId: held.instance.id,
      movingName: moving.instance.scan_name,
      heldName: held.instance.scan_name,
      matrixBefore: moving.instance.matrix,
      heldMatrix: held.instance.matrix,
      userId,
    })
    id = made.id
    await dropEarlierDrafts(s, sceneId, moving.instance.id, userId, id)
  }
  const spacing = Math.max(moving.scan.spacing ?? 0, held.scan.spacing ?? 0)
  const noise = Math.hypot(moving.scan.entered_uncertainty ?? moving.scan.estimated_uncertainty ?? 0, held.scan.entered_uncertainty ?? held.scan.estimated_uncertainty ?? 0)
  const icp: StoredIcp = {
    runId: randomUUID(),
    status: 'running',
    stage: 'reading the points',
    startedFrom: fit ? 'fit' : 'placement',
    maxDistance: body.maxDistance ?? defaultMaxDistance(fit, spacing, noise),
    sampleCap: body.sampleCap ?? REFINE_LIMITS.sampleCap.default,
    maxIterations: body.maxIterations ?? REFINE_LIMITS.maxIterations.default,
    iterations: [],
    converged: null,
    reason: null,
    finalRms: null,
    overlap: null,
    sampleCount: null,
    matrix: null,
    startedAt: new Date().toISOString(),
    began: null,
    finishedAt: null,
    seconds: null,
  }
  await repo.updateRegistration(s.db, id, { icp: icp as unknown as Record<string, unknown>, refine_owner: s.processId }, 'draft')
  s.registrationJobs.start(sceneId, id, (signal) => runRefine(s, id, icp, signal))
  return getRegistration(s, id)
}

async function runRefine(s: Services, id: string, initial: StoredIcp, signal: AbortSignal): Promise<void> {
  const row = await repo.findRegistration(s.db, id)
  if (!row || row.state !== 'draft' || !row.held_matrix) return
  let icp = initial
  const started = performance.now()
  // Every write names this run (its runId): a run stopped for a newer one never overwrites that one.
  const save = (patch: Partial<StoredIcp>, extra: Parameters<typeof repo.updateRegistration>[2] = {}) => {
    icp = { ...icp, ...patch }
    return repo.updateRegistration(s.db, id, { ...extra, icp: icp as unknown as Record<string, unknown> }, 'draft', initial.runId)
  }
  try {
    await save({ began: new Date().toISOString() })
    const [moving, held] = await Promise.all([findInstance(s.db, row.moving_instance_id), row.held_instance_id ? findInstance(s.db, row.held_instance_id) : undefined])
    if (!moving || !held) throw new Error('a placement of this registration was removed')
    const heldScan = await findScan(s.db, held.scan_id)
    // Scene cuts (people walking past, a tripod leg) are left out of the fit on both sides.
    const cuts = await sceneCutsOf(s.db, [held.id, moving.id])
    const heldKeep = cuts.get(held.id), movingKeep = cuts.get(moving.id)
    const cutKey = heldKeep ? `:${JSON.stringify(heldKeep)}` : ''
    const target = await s.registrationJobs.target(`${held.scan_id}:${heldScan?.ready_at?.toISOString() ?? ''}${cutKey}`, () => s.scanIndexes.allPoints(held.scan_id, Infinity, heldKeep ? keepsPoint(heldKeep) : undefined))
    const movingPoints = await s.scanIndexes.allPoints(moving.scan_id, Infinity, movingKeep ? keepsPoint(movingKeep) : undefined)
    signal.throwIfAborted()
    await save({ stage: 'pairing the points' })
    const fit = (row.fit as StoredFit | null) ?? null
    const c0 = fit?.matrix ?? [...IDENTITY]
    const pHeld = row.held_matrix, pMoving = row.matrix_before
    const start = multiplyRigid(invertRigid(pHeld), multiplyRigid(c0, pMoving))
    let lastWrite = 0
    let writing: Promise<unknown> = Promise.resolve()
    const result = await refineIcp(target, movingPoints, {
      start,
      maxDistance: icp.maxDistance,
      sampleCap: icp.sampleCap,
      maxIterations: icp.maxIterations,
      signal,
      onProgress: (p) => {
        icp = { ...icp, iterations: [...icp.iterations, { rms: p.rms, pointRms: p.pointRms, overlap: p.overlap, pairs: p.pairs, fitted: p.fitted }] }
        const now = performance.now()
        if (now - lastWrite < PROGRESS_MS) return
        lastWrite = now
        writing = writing.then(() => repo.updateRegistration(s.db, id, { icp: icp as unknown as Record<string, unknown> }, 'draft', initial.runId)).catch(() => undefined)
      },
    })
    await writing
    // At least one accepted step: the refined transform (its RMS is no higher than the start's, icp.ts).
    const moved = result.iterations.length > 1
    const correction = moved ? multiplyRigid(pHeld, multiplyRigid(result.matrix, invertRigid(pMoving))) : null
    const done: Partial<StoredIcp> = {
      status: moved || result.converged ? 'done' : 'failed',
      stage: null,
      iterations: result.iterations.map((i) => ({ rms: i.rms, pointRms: i.pointRms, overlap: i.overlap, pairs: i.pairs, fitted: i.fitted })),
      converged: result.converged,
      reason: result.reason,
      finalRms: result.finalRms,
      overlap: result.overlap,
      sampleCount: result.sampleCount,
      matrix: correction ?? (result.converged ? c0 : null),
      finishedAt: new Date().toISOString(),
      seconds: (performance.now() - started) / 1000,
    }
    const next = { ...icp, ...done }
    const final = next.matrix ?? fit?.matrix ?? null
    const pairs = (row.pairs ?? []) as StoredPair[]
    const summary = final && pairs.length ? tieSummary(pairs, final) : null
    const figure = figureColumns(rmsFigure(summary, next))
    await save(done, final ? { correction: final, matrix_after: multiplyRigid(final, pMoving), ...figure } : {})
  } catch (err) {
    const aborted = signal.aborted
    const reason = aborted ? (signal.reason instanceof Error ? signal.reason.message : 'stopped') : err instanceof Error ? err.message : String(err)
    if (!aborted) s.log.error({ err, registrationId: id }, 'ICP refinement failed')
    await save({ status: aborted ? 'cancelled' : 'failed', stage: null, reason, finishedAt: new Date().toISOString(), seconds: (performance.now() - started) / 1000 }).catch(() => undefined)
  }
}

/**
 * Refinements left running by a server process that stopped or died are failed (the job died with it);
 * one another live process runs is not touched (registrations.refine_owner, server/jobs/leases.ts). Every
 * process runs it in its sweep.
 */
export async function failOrphanedRefinements(s: Services): Promise<number> {
  const rows = await repo.failOrphanedRefinements(s.db, s.config.cluster.leaseMs, 'the server stopped during the refinement; refine again')
  return rows.length
}

// ---------------------------------------------------------------------------------------------------------
// Accept and undo.

/** Sets the moving placement to C P_before (the scene service: live, markers re-checked) and records it. */
export async function acceptRegistration(s: Services, id: string, userId: string | null): Promise<Registration> {
  const row = await repo.findRegistration(s.db, id)
  if (!row) throw HttpError.notFound('No such registration.')
  if (row.state !== 'draft') throw HttpError.conflict(`This registration is ${row.state} already.`)
  if (s.registrationJobs.isRunning(id)) throw HttpError.conflict('The refinement is still running: wait for it to finish, or fit again.')
  if (!row.correction || !row.matrix_after) throw HttpError.conflict('Nothing to accept yet: fit the tie points or refine first.')
  const moving = await findInstance(s.db, row.moving_instance_id)
  if (!moving) throw HttpError.conflict('The placement to move is no longer in the scene.')
  const held = row.held_instance_id ? await findInstance(s.db, row.held_instance_id) : undefined
  if (!sameMatrix(moving.matrix, row.matrix_before) || (held && !sameMatrix(held.matrix, row.held_matrix))) {
    throw HttpError.conflict('A placement has moved since this fit: fit the tie points again.')
  }
  const problem = rigidProblem(row.matrix_after)
  if (problem) throw HttpError.conflict(`The aligned matrix is not rigid (${problem}); fit again.`)
  const accepted = await repo.updateRegistration(s.db, id, { state: 'accepted', accepted_by: userId, accepted_at: new Date() }, 'draft')
  if (!accepted) throw HttpError.conflict('This registration was accepted or replaced meanwhile.')
  try {
    // Through the scene service, as the API's PATCH and the live documents go: every marker on it is checked again.
    await editInstance(s, moving.id, { matrix: row.matrix_after })
  } catch (err) {
    await repo.updateRegistration(s.db, id, { state: 'draft', accepted_by: null, accepted_at: null }, 'accepted')
    throw err
  }
  return getRegistration(s, id)
}

/** Sets the placement back to the matrix it had before, recorded as a registration of kind 'undo'. */
export async function undoRegistration(s: Services, id: string, userId: string | null): Promise<Registration> {
  const row = await repo.findRegistration(s.db, id)
  if (!row) throw HttpError.notFound('No such registration.')
  if (row.kind !== 'fit' || row.state !== 'accepted' || !row.matrix_after) throw HttpError.conflict(row.state === 'undone' ? 'This registration was undone already.' : 'Only an accepted registration can be undone.')
  const moving = await findInstance(s.db, row.moving_instance_id)
  if (!moving) throw HttpError.conflict('The placement is no longer in the scene.')
  if (!sameMatrix(moving.matrix, row.matrix_after)) {
    throw HttpError.conflict('The placement has moved since this registration was accepted; undoing it would throw that move away. Move it by hand or align it again.')
  }
  const now = new Date()
  const undone = await repo.updateRegistration(s.db, id, { state: 'undone', undone_by: userId, undone_at: now }, 'accepted')
  if (!undone) throw HttpError.conflict('This registration was undone meanwhile.')
  const back = await repo.insertRegistration(s.db, {
    sceneId: row.scene_id,
    kind: 'undo',
    state: 'accepted',
    movingInstanceId: row.moving_instance_id,
    heldInstanceId: row.held_instance_id,
    movingName: row.moving_name,
    heldName: row.held_name,
    correction: row.correction ? invertRigid(row.correction) : null,
    matrixBefore: row.matrix_after,
    heldMatrix: row.held_matrix,
    matrixAfter: row.matrix_before,
    undoesId: row.id,
    userId,
    acceptedAt: now,
  })
  await editInstance(s, moving.id, { matrix: row.matrix_before })
  return getRegistration(s, back.id)
}

// ---------------------------------------------------------------------------------------------------------
// The report.

/** Each placement with the registration that holds for it now, and the scene's recorded registrations. */
export async function registrationReport(s: Services, sceneId: string): Promise<RegistrationReport> {
  const instances = await listInstances(s.db, sceneId)
  const states = await registrationStates(s.db, sceneId, instances)
  const placements: PlacementRegistration[] = instances.map((i) => {
    const st = states.get(i.id)
    return {
      instanceId: i.id,
      name: i.scan_name,
      matrix: i.matrix,
      registrationId: st?.current?.registrationId ?? null,
      movedSince: st?.movedSince ?? false,
      rms: st?.current?.rms ?? null,
      rmsSource: st?.current?.rmsSource ?? null,
      registrationU: st?.current?.u ?? null,
    }
  })
  return { placements, registrations: (await repo.listRecorded(s.db, sceneId)).map(toRegistration) }
}
