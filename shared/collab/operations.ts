/**
 * Every kind of thing a live connection can do, in one registry: opening each document, and each kind of
 * change a connection can send. The server decides every incoming change by looking it up here
 * (`liveOperationOf`, then `LIVE_OPERATIONS[name]`: the right it needs, or why it is never taken from a
 * connection), and tests/api/liveAuthorization.test.ts walks every entry with every role, so a new kind of
 * live change is decided and tested the moment it is added here.
 */

import type { Right } from '../auth/roles'
import { WORK_MAPS, type DocumentKind } from './documents'

export interface LiveOperation {
  document: DocumentKind
  /** 'open': connecting to the document; 'change': a change a connection sends in it. */
  kind: 'open' | 'change'
  /** The right it needs (shared/auth/roles.ts); null: no role may (the document is read-only to everyone). */
  right: Right | null
  /** Set when no connection may ever make this change, whatever its right: why (the close reason's words). */
  refused?: string
  /** What it is, in a sentence (for the walk's names and the contributor guide). */
  what: string
}

export const LIVE_OPERATIONS = {
  openWork: { document: 'work', kind: 'open', right: 'view', what: 'open the work document (markers, placements, objects, trims)' },
  openRecord: { document: 'record', kind: 'open', right: 'view', what: 'open the record document (checks, reviews)' },
  markerCreate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'add an entry to the markers map' },
  markerUpdate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'change an entry of the markers map' },
  markerDelete: { document: 'work', kind: 'change', right: 'editMarkers', what: 'delete an entry of the markers map' },
  placementMove: { document: 'work', kind: 'change', right: 'editScans', what: 'change an entry of the instances map (move, show, colour)' },
  placementAdd: { document: 'work', kind: 'change', right: 'editScans', refused: 'placements are added through the API', what: 'add an entry to the instances map' },
  placementRemove: { document: 'work', kind: 'change', right: 'editScans', refused: 'placements are removed through the API', what: 'delete an entry of the instances map' },
  objectCreate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'add an entry to the objects map' },
  objectUpdate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'change an entry of the objects map (name, members, stray points)' },
  objectDelete: { document: 'work', kind: 'change', right: 'editMarkers', what: 'delete an entry of the objects map' },
  trimCreate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'add an entry to the trims map' },
  trimUpdate: { document: 'work', kind: 'change', right: 'editMarkers', what: 'change an entry of the trims map (mode, label, shape)' },
  trimDelete: { document: 'work', kind: 'change', right: 'editMarkers', what: 'delete an entry of the trims map' },
  writeMeta: { document: 'work', kind: 'change', right: 'editMarkers', refused: 'the meta map is written by the server only', what: 'write the meta map' },
  writeUnknown: { document: 'work', kind: 'change', right: 'editMarkers', refused: 'the work document has no such map', what: 'write a shared type that is not one of the known maps' },
  writeRecord: { document: 'record', kind: 'change', right: null, what: 'write the record document (server-written)' },
} as const satisfies Record<string, LiveOperation>

export type LiveOperationName = keyof typeof LIVE_OPERATIONS
export type LiveChangeName = { [K in LiveOperationName]: (typeof LIVE_OPERATIONS)[K]['kind'] extends 'change' ? K : never }[LiveOperationName]
/** The changes a connection may make when its role allows: each has a check of its own on the server. */
export type LiveCheckedChangeName = { [K in LiveChangeName]: (typeof LIVE_OPERATIONS)[K] extends { refused: string } ? never : (typeof LIVE_OPERATIONS)[K]['right'] extends null ? never : K }[LiveChangeName]

export type ChangeAction = 'add' | 'update' | 'delete'

/** Which operation a change is: the document, the root shared type it is in, and what it does to the key. */
export function liveOperationOf(document: DocumentKind, root: string, action: ChangeAction): LiveChangeName {
  if (document === 'record') return 'writeRecord'
  if (root === WORK_MAPS.markers) return action === 'add' ? 'markerCreate' : action === 'update' ? 'markerUpdate' : 'markerDelete'
  if (root === WORK_MAPS.instances) return action === 'add' ? 'placementAdd' : action === 'update' ? 'placementMove' : 'placementRemove'
  if (root === WORK_MAPS.objects) return action === 'add' ? 'objectCreate' : action === 'update' ? 'objectUpdate' : 'objectDelete'
  if (root === WORK_MAPS.trims) return action === 'add' ? 'trimCreate' : action === 'update' ? 'trimUpdate' : 'trimDelete'
  if (root === WORK_MAPS.meta) return 'writeMeta'
  return 'writeUnknown'
}
