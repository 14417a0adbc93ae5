import { z } from 'zod'
import { Id, Timestamp } from './common'
import { Checkpoint } from './checkpoints'
import { Marker } from './markers'

/**
 * The measurement sheet of a scene (the report): every marker with its value and uncertainty, states and
 * people; the scans used; the cautions. As the scene is now, or as a checkpoint froze it.
 */
export const SheetQuery = z.object({ checkpoint: Id.optional() }).strict()
export type SheetQuery = z.infer<typeof SheetQuery>
/** The CSV's query: which table (the markers, or the scans used with their registration), and a checkpoint. */
export const SheetCsvQuery = SheetQuery.extend({ table: z.enum(['markers', 'scans']).default('markers') }).strict()
export type SheetCsvQuery = z.infer<typeof SheetCsvQuery>

export const SheetScan = z.object({
  placementId: Id,
  scanId: Id,
  name: z.string(),
  pointCount: z.number().nullable(),
  /** Mean spacing, metres. */
  spacing: z.number().nullable(),
  /** The point uncertainty the checks use (entered, else estimated), metres. */
  pointUncertainty: z.number().nullable(),
  /** RMS of the placement's accepted registration, metres; null while it has none. */
  registrationRms: z.number().nullable(),
  /** Which figure that RMS is: check points, ICP (point-to-plane) or the fitted tie points. */
  registrationSource: z.enum(['check-points', 'icp', 'tie-points']).nullable(),
  /** The placement had an accepted registration but was moved since (so it counts as not aligned). */
  registrationMovedSince: z.boolean(),
})
export type SheetScan = z.infer<typeof SheetScan>

export const Sheet = z.object({
  project: z.object({ id: Id, name: z.string() }),
  scene: z.object({ id: Id, name: z.string() }),
  generatedAt: Timestamp,
  checkpoint: Checkpoint.nullable(),
  markers: z.array(Marker),
  scans: z.array(SheetScan),
  cautions: z.array(z.string()),
})
export type Sheet = z.infer<typeof Sheet>
export const SheetResponse = z.object({ sheet: Sheet })
