/**
 * The live documents of a scene (server/collab/README.md), one module for their names and shape.
 *
 * - The work document (`scene:<id>`), written by owners and measurers: map `markers` (marker id to
 *   {kind, label, anchors in each placement's own frame, params}) and map `instances` (placement id to
 *   {scanId, matrix, visible, colour}).
 * - The record document (`scene:<id>:record`), written only by the server: map `markers` (marker id to its
 *   check, authorship, review and a summary of its comments).
 *
 * A client that may write a Yjs document may write all of it, hence two documents; the server drops every
 * update a read-only connection sends.
 */

import { z } from 'zod'
import { invertRigid, transformPoint, type Matrix4 } from '../geometry/rigidTransform'
import { Id, Timestamp } from '../schemas/common'
import { Check, CommentSummary, MARKER_KINDS, MarkerReview, PersonRef, blankCheck, noComments, openReview, type Anchor, type Marker } from '../schemas/markers'

export const DOCUMENT_VERSION = 1

export const DOCUMENT_KINDS = ['work', 'record'] as const
export type DocumentKind = (typeof DOCUMENT_KINDS)[number]

/** Map names inside each document. */
export const WORK_MAPS = { markers: 'markers', instances: 'instances', objects: 'objects', trims: 'trims', meta: 'meta' } as const
export const RECORD_MAPS = { markers: 'markers', meta: 'meta' } as const

export function documentName(sceneId: string, kind: DocumentKind): string {
  return kind === 'work' ? `scene:${sceneId}` : `scene:${sceneId}:record`
}

/** WebSocket paths (server/collab/README.md). */
export function collabPath(sceneId: string, kind: DocumentKind): string {
  return kind === 'work' ? `/collab/${sceneId}` : `/collab/${sceneId}/record`
}

/** Close codes the server ends a live connection with (4000-4999 are the application's own). */
export const CLOSE_CODES = {
  /** No valid session (or viewing pass). */
  unauthenticated: 4401,
  /** Signed in, but not a member of the scene's project, or the pass was revoked. */
  forbidden: 4403,
  /** No such scene. */
  notFound: 4404,
  /** The Origin header does not name this server. */
  badOrigin: 4400,
  /** The server is shutting down; reconnect later. */
  goingAway: 1001,
  /** The server failed on something of its own; reconnect. */
  serverError: 1011,
  /**
   * A change the connection sent was refused before it was applied (another scene's id, a value that does
   * not parse, a server-only map); the reason names the marker or placement and the problem. The page
   * drops its copy of the document and loads the server's again.
   */
  refused: 4422,
  /** A read-only connection (mentor, guest, anyone on the record document) sent a change. */
  readOnly: 4405,
  /** The person's role in the project changed: reconnect, and the new role holds. */
  roleChanged: 4409,
  /** The person was signed out (signing out, a new password): sign in again. */
  signedOut: 4419,
  /** The person is no longer a member, or the project was deleted. */
  accessEnded: 4410,
  /**
   * The connection passed one of its caps (sync requests or changes a second, a change's size, messages before
   * sign-in was checked, a read-only connection's message size, data left unread); the reason names it. The
   * page waits a moment and reconnects.
   */
  tooMuch: 4429,
} as const
export type CloseCodeName = keyof typeof CLOSE_CODES

/** A WebSocket close reason is at most 123 bytes (RFC 6455 section 5.5: 125 less the 2-byte code). */
export const CLOSE_REASON_MAX_BYTES = 123

/** Cuts a reason to fit a close frame, on a character boundary. */
export function closeReason(text: string): string {
  const bytes = new TextEncoder().encode(text)
  if (bytes.byteLength <= CLOSE_REASON_MAX_BYTES) return text
  let out = text
  while (new TextEncoder().encode(out + '…').byteLength > CLOSE_REASON_MAX_BYTES) out = out.slice(0, -1)
  return out + '…'
}

/** Awareness (presence) limits per connection. */
export const AWARENESS_LIMITS = { maxBytes: 2048, perSecond: 20 } as const

const Finite = z.number({ error: 'must be a finite number' })

/** A marker in the work document: anchors in each placement's own frame (metres). */
export const LiveMarker = z
  .object({
    kind: z.enum(MARKER_KINDS),
    label: z.string().trim().min(1).max(80),
    anchors: z.array(z.object({ instanceId: Id, x: Finite, y: Finite, z: Finite }).strict()).max(3),
    params: z.record(z.string(), z.unknown()),
  })
  .strict()
export type LiveMarker = z.infer<typeof LiveMarker>

/** A placement in the work document. */
export const LiveInstance = z
  .object({ scanId: Id, matrix: z.array(Finite).length(16), visible: z.boolean(), color: z.string() })
  .strict()
export type LiveInstance = z.infer<typeof LiveInstance>

/** An object in the work document (shared/schemas/objects.ts): its name, member placements and stray setting. */
export const LiveObject = z
  .object({ name: z.string(), members: z.array(Id), stray: z.object({ k: z.number(), n: z.number() }).strict().nullable() })
  .strict()
export type LiveObject = z.infer<typeof LiveObject>

/** A trim in the work document: its shape in its placement's own frame; objectId null for a scene cut. */
export const LiveTrim = z
  .object({ instanceId: Id, objectId: Id.nullable(), mode: z.enum(['keep', 'cut']), label: z.string().nullable(), shape: z.record(z.string(), z.unknown()) })
  .strict()
export type LiveTrim = z.infer<typeof LiveTrim>

/**
 * A marker's entry in the record document (server-written): the revision the server holds, its check, the
 * people and times stamped from the connections, never from a client, its review, and a summary of its
 * comments (a client refetches the marker's threads when it moves). The defaults read entries written before
 * reviews and comments existed.
 */
export const LiveRecord = z.object({
  revision: z.number().int(),
  check: Check,
  author: PersonRef,
  lastEditor: PersonRef,
  createdAt: Timestamp,
  updatedAt: Timestamp,
  review: MarkerReview.default(openReview),
  comments: CommentSummary.default(noComments),
})
export type LiveRecord = z.infer<typeof LiveRecord>

type Matrices = ReadonlyMap<string, Matrix4>

/** Scene-frame anchors into each placement's own frame, as the work document keeps them. */
export function anchorsToLive(anchors: readonly Anchor[], matrices: Matrices): LiveMarker['anchors'] {
  return anchors.map((a) => {
    const m = matrices.get(a.instanceId)
    if (!m) return { ...a }
    const [x, y, z] = transformPoint(invertRigid(m), a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
}

/**
 * A marker as the API gives it, from its two live entries. `awaitingCheck` says the work entry changed after
 * the record's last word on it (the server has not stored or checked that change yet): the last check is kept
 * for reading, marked pending, as the API does while a re-check runs. No record yet (made offline): pending,
 * nobody stamped.
 */
export function markerFromDocuments(
  id: string,
  sceneId: string,
  entry: LiveMarker,
  record: LiveRecord | undefined,
  matrices: Matrices,
  awaitingCheck: boolean,
  now: string,
): Marker {
  const anchors = entry.anchors.map((a) => {
    const m = matrices.get(a.instanceId)
    if (!m) return { ...a }
    const [x, y, z] = transformPoint(m, a.x, a.y, a.z)
    return { instanceId: a.instanceId, x, y, z }
  })
  const check = record ? (awaitingCheck && record.check.state !== 'pending' ? { ...record.check, state: 'pending' as const } : record.check) : blankCheck('pending', 0)
  return {
    id,
    sceneId,
    kind: entry.kind,
    label: entry.label,
    anchors,
    params: entry.params,
    revision: record?.revision ?? 0,
    check,
    createdBy: record?.author ?? null,
    updatedBy: record?.lastEditor ?? null,
    createdAt: record?.createdAt ?? now,
    updatedAt: record?.updatedAt ?? now,
    review: record?.review ?? openReview(),
    comments: record?.comments ?? noComments(),
  }
}
