import type { Readable } from 'node:stream'
import type pino from 'pino'
import type { Db } from '../db'
import { claimScan, deleteTiles, updateClaimedScan } from '../repositories/scans'
import type { ObjectStore } from '../storage/objects'
import { buildOctree } from './octree/buildOctree'
import { encodeNodeTile } from './octree/nodeTile'
import { PointBuffer } from './pointBuffer'
import { createReader, detectFormat, openE57, ScanFormatError, SNIFF_BYTES, type PointBatch, type ReadSummary, type ScanFormat, type ScanHeaderInfo } from './readers'
import { completeStations, createStations } from './e57Stations'
import { objectSource } from './sources'
import { computeScanStats } from './stats/scanStats'

export interface IngestDeps {
  db: Db
  objects: ObjectStore
  log: pino.Logger
  lazLimitBytes: number
  staleMs: number
  /** Processing attempts a scan gets (crashes and stalls included); the next claim fails it. */
  maxAttempts: number
  /** This process as `claimed_by` records it (host:pid). */
  name?: string
  /** Points of one scan this worker can hold in memory (config `limits.workerPoints`); none: no ceiling. */
  workerPoints?: number
  /**
   * Queues a scan's processing (the worker: a pg-boss job). Without it, the stations an E57 upload adds
   * are processed in this call, one after another, once the upload's own scan is done.
   */
  enqueue?: (scanId: string) => Promise<unknown>
}

/** Share of the job each stage takes, for the progress bar (parsing dominates for text formats). */
const READ_SHARE = 0.55
const STATS_SHARE = 0.1

const EXTENSION: Record<ScanFormat, string> = { ply: 'ply', xyz: 'xyz', pcd: 'pcd', las: 'las', laz: 'laz', 'station-log': 'log', e57: 'e57' }

/** A file with more points than its project allows; its message says the limit and how to split the file. */
export class PointLimitError extends Error {}

/**
 * The message for a file over the project's point limit: from its header's count when it has one, else
 * from the point where reading stopped.
 */
export function pointLimitMessage(limit: number, declared: number | null, format: ScanFormat | null, source: 'project' | 'server' = 'project'): string {
  const n = (v: number) => v.toLocaleString('en-GB')
  const holds = declared !== null ? `its header declares ${n(declared)} points` : `reading stopped after ${n(limit)} points, with more to come`
  const how = format === 'station-log'
    ? 'split the station log into runs of readings of at most that many and upload each as its own scan'
    : format === 'xyz'
      ? 'split the file into parts of at most that many lines (for example by area) and upload each part as its own scan'
      : 'split the file into parts of at most that many points (for example by area, with the tool that wrote it) and upload each part as its own scan'
  if (source === 'server') return `The scan has more points than this server can process in one piece: ${holds}, and its ingest worker holds at most ${n(limit)} points of a scan in memory. To load it, ${how}.`
  return `The scan has more points than this project allows: ${holds}, and the limit per scan is ${n(limit)}. To load it, ${how}, or ask the project's owner to raise "Points per scan" in the project's settings.`
}

/** Collects the first bytes of a stream without losing them. */
async function* withSniff(stream: Readable, onFirst: (bytes: Uint8Array) => void): AsyncGenerator<Uint8Array> {
  let head: Uint8Array[] = []
  let headBytes = 0
  let sniffed = false
  for await (const chunk of stream as AsyncIterable<Uint8Array>) {
    if (sniffed) {
      yield chunk
      continue
    }
    head.push(chunk)
    headBytes += chunk.length
    if (headBytes >= SNIFF_BYTES) {
      sniffed = true
      const joined = Buffer.concat(head)
      onFirst(joined)
      head = []
      yield joined
    }
  }
  if (!sniffed) {
    const joined = Buffer.concat(head)
    onFirst(joined)
    if (joined.length) yield joined
  }
}

/**
 * Processes one scan: claims it (a duplicate job or a live worker's scan is left alone), drops any tiles
 * of an earlier attempt, streams the original from object storage through its reader, computes the
 * statistics, builds the octree and stores each tile as it is made. Bad input fails the scan with the
 * reader's message; nothing of another scan is touched.
 */
export async function ingestScan(deps: IngestDeps, scanId: string): Promise<'done' | 'skipped' | 'failed'> {
  const { db, log } = deps
  const scan = await claimScan(db, scanId, deps.staleMs, deps.maxAttempts, deps.name ?? null)
  if (!scan) return 'skipped'
  // Every write below counts only while this claim is the scan's current one (another worker may take a
  // scan whose heartbeat stopped: this one then stops, and its late writes are discarded).
  const claim = scan.claim_id!
  let lost = false
  const write = async (values: Parameters<typeof updateClaimedScan>[3]) => {
    if (!(await updateClaimedScan(db, scanId, claim, values))) lost = true
    if (lost) throw new ClaimLostError()
  }
  const project = await db.selectFrom('projects').select('max_scan_points').where('id', '=', scan.project_id).executeTakeFirst()
  // The lower of the project's setting and what this worker can hold in memory decides.
  const projectLimit = Number(project?.max_scan_points ?? Infinity)
  const pointLimit = Math.min(projectLimit, deps.workerPoints ?? Infinity)
  const limitSource = pointLimit < projectLimit ? 'server' : 'project'
  const size = Number(scan.size_bytes)
  let lastWrite = 0
  let pending: Promise<unknown> = Promise.resolve()
  const report = (progress: number, stage: string, force = false) => {
    const now = Date.now()
    if (!force && now - lastWrite < 250) return
    lastWrite = now
    pending = pending.then(() => write({ progress: Math.min(0.999, progress), stage, heartbeat_at: new Date() }))
    // Marked handled now; awaited (and thrown) at the next stage.
    pending.catch(() => {})
  }
  // Seconds per stage, logged with the result: where an ingest spends its time.
  const timings: Record<string, number> = { waited: Math.round(Date.now() - scan.created_at.getTime()) / 1000 }
  let mark = performance.now()
  const lap = (name: string) => {
    const now = performance.now()
    timings[name] = Math.round(now - mark) / 1000
    mark = now
  }
  try {
    await deleteTiles(db, scanId)
    let format: ScanFormat | null = null
    let header: ScanHeaderInfo | null = null
    const buffer = new PointBuffer()
    let reader: ReturnType<typeof createReader> | null = null
    let read = 0
    const stream = await deps.objects.get(scan.blob_key)
    let reserved = false
    let declaredCount: number | null = null
    const onBatch = (b: PointBatch) => {
      // Before the points are kept: the buffer never grows past the project's limit.
      if (buffer.count + b.count > pointLimit) throw new PointLimitError(pointLimitMessage(pointLimit, reader?.header?.declaredPointCount ?? declaredCount, format, limitSource))
      buffer.append(b)
    }
    let ranged = false
    let stationsMade: string[] = []
    for await (const chunk of withSniff(stream, (first) => {
      // A declared format must still match the content; otherwise the name and the bytes decide.
      format = detectFormat(first, scan.declared_format ? `upload.${EXTENSION[scan.declared_format as ScanFormat]}` : scan.file_name)
      report(0, `reading ${format}`, true)
      // E57 keeps its XML at the end: it is read through ranged reads below, not front to back.
      if (format === 'e57') {
        ranged = true
        return
      }
      // No byteLength: a file cut short then fails where it ends ("byte 722: file ends inside point 51"),
      // which says more than a header-versus-size mismatch; nothing is allocated from the header's count.
      reader = createReader(format, { onBatch, reuseBuffers: true, maxLazBytes: deps.lazLimitBytes })
    })) {
      if (ranged) break
      reader!.push(chunk)
      // Sized once from the header (growing to 10 M points costs twice the memory and time), but never
      // beyond one point per byte of the file, so a lying header cannot allocate billions.
      const declared = reader!.header?.declaredPointCount
      // A header over the limit fails before anything is sized from it (LAZ: before it is decoded).
      if (declared && declared > pointLimit) throw new PointLimitError(pointLimitMessage(pointLimit, declared, format, limitSource))
      if (!reserved && declared) {
        buffer.reserve(Math.min(declared, size, pointLimit))
        reserved = true
      }
      read += chunk.length
      report((READ_SHARE * read) / size, `reading ${format}`)
    }
    let summary: ReadSummary
    if (ranged) {
      // Header, XML, then each scan's binary section a window of pages at a time (ranged GETs): the
      // original is never held whole. One scan in the file: read at its pose. Several: this scan reads its
      // own station (the upload's scan station 0, adding a scan for each other one) in the station's frame;
      // the poses place them in the scene made once all are ready (e57Stations.ts).
      const file = await openE57(objectSource(deps.objects, scan.blob_key, size))
      const several = file.scans.length > 1
      const index = scan.station_index ?? 0
      if (several && !file.scans[index]) throw new ScanFormatError(`XML path /data3D: the file has ${file.scans.length} scans, and this scan reads station ${index + 1}`, { field: '/data3D' })
      // The upload's own scan (station 0, or not yet marked); a station whose upload's scan was deleted is not one.
      if (several && scan.source_scan_id === null && (scan.station_index ?? 0) === 0) {
        stationsMade = await createStations(db, scan, file)
        if (deps.enqueue) for (const id of stationsMade) await deps.enqueue(id)
      }
      declaredCount = several ? file.scans[index]!.recordCount : file.header.declaredPointCount
      if (declaredCount && declaredCount > pointLimit) throw new PointLimitError(pointLimitMessage(pointLimit, declaredCount, format, limitSource))
      if (declaredCount) buffer.reserve(Math.min(declaredCount, size, pointLimit))
      const options = {
        reuseBuffers: true,
        onBatch: (b: PointBatch) => {
          onBatch(b)
          report((READ_SHARE * buffer.count) / Math.max(1, declaredCount ?? 1), 'reading e57')
        },
      }
      summary = several ? await file.readScan(index, { ...options, applyPose: false }) : await file.readAll(options)
      const notes = (summary.header as { notes?: string[] }).notes ?? []
      if (notes.length) log.info({ scanId, notes, scans: file.scans.length }, 'e57 read with notes')
    } else {
      summary = await reader!.end()
    }
    header = summary.header
    lap('read')
    buffer.trim()
    report(READ_SHARE, 'measuring spacing and noise', true)
    await pending
    const stats = computeScanStats(buffer)
    const perPoint = buffer.uncertainties
    const medianPerPoint = perPoint ? median(perPoint.subarray(0, buffer.count)) : null
    lap('stats')

    report(READ_SHARE + STATS_SHARE, 'building level-of-detail tiles', true)
    await pending
    const tree = buildOctree(buffer)
    lap('octree')
    let done = 0
    type TileRow = { scan_id: string; claim_id: string; node_key: string; level: number; point_count: number; min_x: number; min_y: number; min_z: number; max_x: number; max_y: number; max_z: number; byte_size: number; data: Buffer }
    let batch: TileRow[] = []
    let batchBytes = 0
    // One insert in flight while the next batch is encoded: PostgreSQL stores one while Node encodes the next.
    let inserting: Promise<unknown> = Promise.resolve()
    const flush = async () => {
      await inserting
      if (!batch.length) return
      const rows = batch
      batch = []
      batchBytes = 0
      inserting = db.insertInto('scan_tiles').values(rows).execute()
      // Awaited at the next flush; marked handled now so a failure while encoding cannot go unhandled.
      inserting.catch(() => {})
    }
    for (const node of tree.nodes) {
      const bytes = encodeNodeTile(buffer, node)
      const b = node.bounds
      if (lost) throw new ClaimLostError()
      batch.push({ scan_id: scanId, claim_id: claim, node_key: node.key, level: node.level, point_count: node.pointCount, min_x: b.min[0], min_y: b.min[1], min_z: b.min[2], max_x: b.max[0], max_y: b.max[1], max_z: b.max[2], byte_size: bytes.length, data: Buffer.from(bytes.buffer, bytes.byteOffset, bytes.length) })
      batchBytes += bytes.length
      done += node.pointCount
      if (batchBytes > 4 * 1024 * 1024) {
        await flush()
        report(READ_SHARE + STATS_SHARE + (1 - READ_SHARE - STATS_SHARE) * (done / tree.pointCount), 'storing tiles')
      }
    }
    await flush()
    await inserting
    await pending
    lap('tiles')
    const bounds = stats.bounds ?? summary.bounds
    const station = header.format === 'station-log'
      ? { stationId: header.stationId, laserClass: header.laserClass, ratedRange: header.ratedRange, shotsPerReading: header.shotsPerReading, readings: summary.pointCount + Object.values(summary.dropped).reduce((a, n) => a + (n ?? 0), 0) }
      : null
    await write({
      status: 'ready',
      progress: 1,
      stage: null,
      error: null,
      format: summary.format,
      point_count: buffer.count,
      min_x: bounds.min[0],
      min_y: bounds.min[1],
      min_z: bounds.min[2],
      max_x: bounds.max[0],
      max_y: bounds.max[1],
      max_z: bounds.max[2],
      spacing: stats.spacing,
      estimated_uncertainty: medianPerPoint ?? stats.pointUncertainty?.value ?? null,
      attributes: JSON.stringify({ color: header.hasColor, intensity: header.hasIntensity, perPointUncertainty: perPoint !== null }),
      dropped: JSON.stringify(summary.dropped),
      station: JSON.stringify(station),
      heartbeat_at: null,
      ready_at: new Date(),
    })
    lap('record')
    log.info({ scanId, points: buffer.count, nodes: tree.nodes.length, seconds: timings }, 'scan ready')
    if (format === 'e57') {
      const root = scan.source_scan_id ?? ((stationsMade.length || scan.station_count) && (scan.station_index ?? 0) === 0 ? scanId : null)
      if (!deps.enqueue) for (const id of stationsMade) await ingestScan(deps, id)
      if (root) {
        const sceneId = await completeStations(db, root)
        if (sceneId) log.info({ scanId: root, sceneId }, 'e57 stations placed in a new scene')
      }
    }
    return 'done'
  } catch (err) {
    await pending.catch(() => {})
    // Taken over by another worker (or its tiles refused by the claim's foreign key): leave everything to it.
    if (lost || err instanceof ClaimLostError || isForeignKeyOf(err, 'scan_tiles_claim')) {
      log.warn({ scanId, claim }, 'another worker has taken this scan; this one stops and its writes are discarded')
      return 'skipped'
    }
    const message = err instanceof ScanFormatError || err instanceof PointLimitError ? err.message : `processing failed: ${err instanceof Error ? err.message : String(err)}`
    if (!(err instanceof ScanFormatError || err instanceof PointLimitError)) log.error({ err, scanId }, 'scan processing failed')
    // Only this claim's tiles and state: a scan another worker has taken meanwhile is left alone.
    if (await updateClaimedScan(db, scanId, claim, { status: 'failed', stage: null, error: message, heartbeat_at: null }).catch(() => false)) await deleteTiles(db, scanId).catch(() => {})
    return 'failed'
  }
}

/** This worker's claim on a scan is no longer the current one. */
class ClaimLostError extends Error {
  constructor() {
    super('the scan was taken by another worker')
  }
}

function isForeignKeyOf(err: unknown, constraint: string): boolean {
  return typeof err === 'object' && err !== null && (err as { code?: string }).code === '23503' && (err as { constraint?: string }).constraint === constraint
}

function median(values: Float32Array): number | null {
  if (values.length === 0) return null
  const sorted = Float32Array.from(values).sort()
  const mid = sorted.length >> 1
  return sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2
}
