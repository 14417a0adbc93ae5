import { stringify } from 'csv-stringify/sync'
import { CAUTIONS } from '@shared/format/cautions'
import { checkOutcome, type Marker, type Sheet, type SheetScan } from '@shared/schemas'
import { HttpError } from '../errors'
import { getCheckpoint } from './checkpoints'
import { registrationStates } from '../registration/current'
import { getScan } from './scans'
import { getScene } from './scenes'
import { markersOf } from './markers'
import type { Services } from '../types'

/**
 * The measurement sheet: the scene's markers (now, or as a checkpoint froze them), the scans its placements
 * use with their counts, spacing, point uncertainty and registration RMS, and the cautions of shared/format/cautions.ts
 * section 11. The CSV is made from the same object, so its values are the API's.
 */
export async function sheetOf(s: Services, sceneId: string, checkpointId?: string): Promise<Sheet> {
  const scene = await getScene(s, sceneId)
  const project = await s.db.selectFrom('projects').select(['id', 'name']).where('id', '=', scene.projectId).executeTakeFirstOrThrow()
  let markers: Marker[]
  let checkpoint: Sheet['checkpoint'] = null
  if (checkpointId) {
    const frozen = await getCheckpoint(s, checkpointId).catch(() => null)
    if (!frozen || frozen.sceneId !== sceneId) throw new HttpError(400, 'invalid-input', 'query.checkpoint: no checkpoint with this id in the scene.', 'checkpoint')
    const { markers: m, ...rest } = frozen
    markers = m
    checkpoint = rest
  } else {
    markers = await markersOf(s, sceneId)
  }
  const scans: SheetScan[] = []
  // The registration that holds for each placement now (checkpoints freeze markers, not placements).
  const registered = await registrationStates(s.db, sceneId, scene.instances)
  for (const i of scene.instances) {
    const scan = await getScan(s, i.scanId)
    const reg = registered.get(i.id)
    scans.push({
      placementId: i.id,
      scanId: scan.id,
      name: i.scanName,
      pointCount: scan.pointCount,
      spacing: scan.spacing,
      pointUncertainty: scan.pointUncertainty,
      registrationRms: reg?.current?.rms ?? null,
      registrationSource: reg?.current?.rmsSource ?? null,
      registrationMovedSince: reg?.movedSince ?? false,
    })
  }
  return {
    project,
    scene: { id: scene.id, name: scene.name },
    generatedAt: new Date().toISOString(),
    checkpoint,
    markers,
    scans,
    cautions: [CAUTIONS.clearance, CAUTIONS.engineering, CAUTIONS.laser],
  }
}

export const SHEET_CSV_COLUMNS = [
  'marker_id',
  'kind',
  'label',
  'value',
  'unit',
  'expanded_uncertainty',
  'coverage_factor',
  'check_state',
  'clearance_outcome',
  'review_state',
  'reviewer',
  'reviewed_at',
  'open_threads',
  'author',
  'last_editor',
  'updated_at',
  'checked_at',
] as const

export const SHEET_SCANS_CSV_COLUMNS = [
  'placement_id',
  'scan_id',
  'scan_name',
  'point_count',
  'spacing',
  'point_uncertainty',
  'registration_rms',
  'registration_source',
  'registration_moved_since',
] as const

/**
 * A header line and one line per row, CRLF-ended and quoted as RFC 4180 says, by csv-stringify; text that a
 * spreadsheet would run as a formula (starting with = + - @, a tab or a carriage return) is kept as text by
 * its `escape_formulas` (a leading apostrophe). Numbers as JavaScript writes them (full precision); no value
 * is an empty field.
 */
function csvTable(columns: readonly string[], rows: (string | number | null | undefined)[][]): string {
  return stringify(
    rows.map((r) => r.map((v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v))),
    { header: true, columns: [...columns], record_delimiter: 'windows', escape_formulas: true },
  )
}

/** The scans used, one row per placement, in metres as the API gives them. */
export function sheetScansCsv(sheet: Sheet): string {
  return csvTable(
    SHEET_SCANS_CSV_COLUMNS,
    sheet.scans.map((s) => [s.placementId, s.scanId, s.name, s.pointCount, s.spacing, s.pointUncertainty, s.registrationRms, s.registrationSource, s.registrationMovedSince ? 'yes' : 'no']),
  )
}

/** Values in SI (metres, degrees, square metres) at full precision, as the API gives them. */
export function sheetCsv(sheet: Sheet): string {
  return csvTable(
    SHEET_CSV_COLUMNS,
    sheet.markers.map((m) => {
      const c = m.check
      return [
        m.id,
        m.kind,
        m.label,
        c.value,
        c.unit,
        c.expandedUncertainty,
        c.coverageFactor,
        c.state,
        checkOutcome(c),
        m.review.state,
        m.review.by?.name,
        m.review.at,
        m.comments.open,
        m.createdBy?.name,
        m.updatedBy?.name,
        m.updatedAt,
        c.checkedAt,
      ]
    }),
  )
}
