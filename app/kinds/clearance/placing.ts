import type { ClearanceParams, MarkerCreateBody } from '@shared/schemas'

export interface ClearanceOptions {
  /** The object (shared/schemas/objects.ts) that must pass: its members' kept points. */
  objectId: string
  sectionMarkerId: string
  /** Further sections along the travel: the passage is the overlap of their openings. */
  alsoThrough?: string[]
  /** Metres; omitted: the project's required margin. */
  requiredMargin?: number
  /** How it moves; omitted: on the floor when the opening has one, else carried. */
  carriage?: ClearanceParams['carriage']
  /** How it may be turned or tipped; omitted: any turn in the opening's plane. */
  orientation?: ClearanceParams['orientation']
}

export function clearanceBody(options: ClearanceOptions): MarkerCreateBody {
  const params: ClearanceParams = {
    objectId: options.objectId,
    sectionMarkerId: options.sectionMarkerId,
  }
  if (options.alsoThrough?.length) params.alsoThrough = options.alsoThrough
  if (options.requiredMargin !== undefined) params.requiredMargin = options.requiredMargin
  if (options.carriage) params.carriage = options.carriage
  if (options.orientation) params.orientation = options.orientation
  return { kind: 'clearance', anchors: [], params }
}
