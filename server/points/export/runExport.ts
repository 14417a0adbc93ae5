import { once } from 'node:events'
import { PassThrough } from 'node:stream'
import type pino from 'pino'
import type { Conn } from '../../db'
import { claimExport, failExport, finishExport, setExportProgress, touchExport } from '../../repositories/exports'
import type { ObjectStore } from '../../storage/objects'
import { E57Writer, type E57ScanPlan } from '../writers/e57Writer'
import { LasWriter, lasScaleOffset } from '../writers/lasWriter'
import { PlyStreamWriter } from '../writers/plyWriter'
import { ExportError, type ByteSink, type ExportBatch } from '../writers/sink'
import { forEachBatch, resolveParts, type ExportSource, type PlacementPart } from './source'

/**
 * The export job (run by the worker process from the `scene-export` queue). Two passes over the stored
 * tiles: the first counts the points and measures their bounds and intensity range (the LAS and PLY headers
 * and E57's layout need them before the first point), the second writes the file straight into a multipart
 * upload to object storage. Progress (0..1, half per pass) reaches the row every `progressEveryMs`.
 */
export interface ExportDeps {
  db: Conn
  objects: ObjectStore
  log: pino.Logger
  progressEveryMs?: number
  /** The server fails a running export silent this long (runtime.ts sweeper); a heartbeat keeps it alive. */
  staleMs?: number
}

export const exportObjectKey = (projectId: string, exportId: string, format: string) => `exports/${projectId}/${exportId}.${format}`

interface PartFigures {
  count: number
  min: [number, number, number]
  max: [number, number, number]
  intensityMin: number
  intensityMax: number
  /** Every intensity a whole number (LAS keeps those as they are). */
  intensityWhole: boolean
}

function emptyFigures(): PartFigures {
  return { count: 0, min: [Infinity, Infinity, Infinity], max: [-Infinity, -Infinity, -Infinity], intensityMin: Infinity, intensityMax: -Infinity, intensityWhole: true }
}

function measure(f: PartFigures, b: ExportBatch): void {
  const p = b.positions
  for (let i = 0; i < b.count; i++) {
    for (let a = 0; a < 3; a++) {
      const v = p[i * 3 + a]!
      if (v < f.min[a]!) f.min[a] = v
      if (v > f.max[a]!) f.max[a] = v
    }
    if (b.intensities) {
      const v = b.intensities[i]!
      if (v < f.intensityMin) f.intensityMin = v
      if (v > f.intensityMax) f.intensityMax = v
      if (f.intensityWhole && !Number.isInteger(v)) f.intensityWhole = false
    }
  }
  f.count += b.count
}

function merge(all: PartFigures[]): PartFigures {
  const out = emptyFigures()
  for (const f of all) {
    out.count += f.count
    for (let a = 0; a < 3; a++) {
      out.min[a] = Math.min(out.min[a]!, f.min[a]!)
      out.max[a] = Math.max(out.max[a]!, f.max[a]!)
    }
    out.intensityMin = Math.min(out.intensityMin, f.intensityMin)
    out.intensityMax = Math.max(out.intensityMax, f.intensityMax)
    out.intensityWhole &&= f.intensityWhole
  }
  return out
}

export async function runExport(deps: ExportDeps, exportId: string): Promise<void> {
  const { db, log } = deps
  const row = await claimExport(db, exportId)
  if (!row) return
  const every = deps.progressEveryMs ?? 250
  const none = '00000000-0000-0000-0000-000000000000'
  const source: ExportSource =
    row.source === 'placement'
      ? { kind: 'placement', sceneId: row.scene_id, instanceId: row.instance_id ?? none }
      : row.source === 'object'
        ? { kind: 'object', sceneId: row.scene_id, objectId: row.object_id ?? none }
        : { kind: 'scene', sceneId: row.scene_id }
  const heartbeat = setInterval(() => void touchExport(db, exportId).catch(() => {}), Math.max(200, (deps.staleMs ?? 30_000) / 3))
  heartbeat.unref()
  let lastReport = 0
  let stored = 0
  let totalStored = 1
  const report = async (force = false) => {
    const now = Date.now()
    if (!force && now - lastReport < every) return
    lastReport = now
    await setExportProgress(db, exportId, Math.min(0.99, stored / (2 * totalStored)))
  }
  try {
    if (row.source === 'placement' && !row.instance_id) throw new ExportError('The placement to export was removed from the scene.')
    if (row.source === 'object' && !row.object_id) throw new ExportError('The object to export was deleted.')
    const t0 = performance.now()
    const parts = await resolveParts(db, source)
    totalStored = Math.max(1, parts.reduce((n, p) => n + p.storedPoints, 0))
    // E57 keeps each placement's pose, so its figures are in the scan's frame; LAS and PLY are in the scene's.
    const frame = row.format === 'e57' ? 'scan' : 'scene'
    const figures: PartFigures[] = []
    for (const part of parts) {
      const f = emptyFigures()
      await forEachBatch(db, part, frame, async (batch, n) => {
        measure(f, batch)
        stored += n
        await report()
      })
      figures.push(f)
    }
    const t1 = performance.now()
    const all = merge(figures)
    if (all.count === 0) throw new ExportError('Nothing to export: the placements hold no points.')
    const colors = parts.every((p) => p.colors)
    const intensities = parts.every((p) => p.intensities)
    // Refuse before anything is uploaded.
    if (row.format === 'las') lasScaleOffset(all.min, all.max)

    const key = exportObjectKey(row.project_id, row.id, row.format)
    const body = new PassThrough({ highWaterMark: 1 << 20 })
    const upload = deps.objects.put(key, body)
    let uploadError: unknown = null
    upload.catch((err) => (uploadError = err))
    let bytes = 0
    let t2 = 0
    const sink: ByteSink = {
      async write(chunk) {
        if (uploadError) throw uploadError
        bytes += chunk.length
        if (!body.write(chunk)) await Promise.race([once(body, 'drain'), upload.then(() => undefined)])
      },
    }
    try {
      await writeFile(deps, row.format, parts, figures, all, { colors, intensities }, sink, async (n) => {
        stored += n
        await report()
      })
      body.end()
      t2 = performance.now()
      await upload
    } catch (err) {
      body.destroy(err instanceof Error ? err : new Error(String(err)))
      await upload.catch(() => {})
      await deps.objects.delete(key).catch(() => {})
      throw err
    }
    const finished = await finishExport(db, exportId, { objectKey: key, pointCount: all.count, byteSize: bytes })
    if (finished.numUpdatedRows === 0n) {
      // The scene was deleted (or the sweeper gave up on this export) while it was written: keep no file.
      await deps.objects.delete(key).catch(() => {})
      return
    }
    const seconds = { measure: (t1 - t0) / 1000, write: (t2 - t1) / 1000, upload: (performance.now() - t2) / 1000 }
    log.info({ exportId, format: row.format, points: all.count, bytes, seconds }, 'export ready')
  } catch (err) {
    const message = err instanceof ExportError ? err.message : `The export failed: ${err instanceof Error ? err.message : String(err)}`
    if (!(err instanceof ExportError)) log.error({ err, exportId }, 'export failed')
    await failExport(db, exportId, message)
  } finally {
    clearInterval(heartbeat)
  }
}

async function writeFile(
  deps: ExportDeps,
  format: 'las' | 'e57' | 'ply',
  parts: PlacementPart[],
  figures: PartFigures[],
  all: PartFigures,
  attributes: { colors: boolean; intensities: boolean },
  sink: ByteSink,
  progress: (storedPoints: number) => Promise<void>,
): Promise<void> {
  const strip = (b: ExportBatch): ExportBatch => ({ count: b.count, positions: b.positions, colors: attributes.colors ? b.colors : null, intensities: attributes.intensities ? b.intensities : null })
  if (format === 'e57') {
    const scans: E57ScanPlan[] = parts.map((p, i) => ({
      name: p.scanName,
      count: figures[i]!.count,
      pose: p.matrix,
      min: figures[i]!.min,
      max: figures[i]!.max,
      intensityMin: figures[i]!.intensityMin,
      intensityMax: figures[i]!.intensityMax,
    }))
    const writer = new E57Writer(sink, { scans, ...attributes })
    await writer.begin()
    for (let i = 0; i < parts.length; i++) {
      await writer.startScan(i)
      await forEachBatch(deps.db, parts[i]!, 'scan', async (batch, n) => {
        await writer.write(strip(batch))
        await progress(n)
      })
    }
    await writer.end()
    return
  }
  const writer =
    format === 'las'
      ? new LasWriter(sink, {
          count: all.count,
          min: all.min,
          max: all.max,
          ...attributes,
          intensityRange: all.intensityWhole && all.intensityMin >= 0 && all.intensityMax <= 65535 ? undefined : [all.intensityMin, all.intensityMax],
        })
      : new PlyStreamWriter(sink, { count: all.count, maxAbs: Math.max(...all.min.map(Math.abs), ...all.max.map(Math.abs)), ...attributes, comments: ['exported by Spanmark; metres, scene frame'] })
  await writer.begin()
  for (const part of parts) {
    await forEachBatch(deps.db, part, 'scene', async (batch, n) => {
      await writer.write(strip(batch))
      await progress(n)
    })
  }
  await writer.end()
}
