/**
 * The live documents of a scene (DESIGN section 6), one module for their names and shape.
 *
 * - The work document (`scene:<id>`), written by owners and measurers: map `markers` (marker id to
 *   {kind, label, anchors in each placement's own frame, params}) and map `instances` (placement id to
 *   {scanId, matrix, visible, colour}).
 * - The record document (`scene:<id>:record`), written only by the server: map `markers` (marker id to its
 *   check, authorship and, later, comments and review).
 *
 * A client that may write a Yjs document may write all of it, hence two documents; the server drops every
 * update a read-only connection sends.
 */

export const DOCUMENT_VERSION = 1

export const DOCUMENT_KINDS = ['work', 'record'] as const
export type DocumentKind = (typeof DOCUMENT_KINDS)[number]

/** Map names inside each document. */
export const WORK_MAPS = { markers: 'markers', instances: 'instances', meta: 'meta' } as const
export const RECORD_MAPS = { markers: 'markers', meta: 'meta' } as const

export function documentName(sceneId: string, kind: DocumentKind): string {
  return kind === 'work' ? `scene:${sceneId}` : `scene:${sceneId}:record`
}

/** WebSocket paths (DESIGN section 7). */
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
} as const
export type CloseCodeName = keyof typeof CLOSE_CODES

/** Awareness (presence) limits per connection. */
export const AWARENESS_LIMITS = { maxBytes: 2048, perSecond: 20 } as const
