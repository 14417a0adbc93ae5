import { MarkerHistory, MarkerList, MarkerResponse, SceneState, type Marker, type MarkerCreateBody, type MarkerReviewBody, type MarkerRevision, type MarkerUpdateBody } from '@shared/schemas'
import { apiPath, http } from './http'

/** The scene's markers with their checks (anchors in the scene frame). */
export async function listMarkers(sceneId: string, signal?: AbortSignal): Promise<Marker[]> {
  return (await http.get(apiPath`/api/scenes/${sceneId}/markers`, MarkerList, { signal })).markers
}

/** Answers with the marker and its check (the server checks it before answering). */
export async function createMarker(sceneId: string, body: MarkerCreateBody): Promise<Marker> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/markers`, body, MarkerResponse)).marker
}

export async function getMarker(markerId: string, signal?: AbortSignal): Promise<Marker> {
  return (await http.get(apiPath`/api/markers/${markerId}`, MarkerResponse, { signal })).marker
}

export async function updateMarker(markerId: string, body: MarkerUpdateBody): Promise<Marker> {
  return (await http.patch(apiPath`/api/markers/${markerId}`, body, MarkerResponse)).marker
}

export function deleteMarker(markerId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/markers/${markerId}`)
}

/** A page of the marker's settled edits (oldest first within it), the latest page when `before` is absent. */
export async function markerHistory(markerId: string, before: string | undefined, signal?: AbortSignal): Promise<{ revisions: MarkerRevision[]; earlier: string | null }> {
  const path = apiPath`/api/markers/${markerId}/history`
  return http.get(before ? `${path}?before=${encodeURIComponent(before)}` : path, MarkerHistory, { signal })
}

/** An earlier version becomes the current one (a new revision); answers with the marker checked again. */
export async function restoreMarker(markerId: string, revisionId: string): Promise<Marker> {
  return (await http.post(apiPath`/api/markers/${markerId}/restore`, { revisionId }, MarkerResponse)).marker
}

/** The scene's markers as they were at a time: each one's last revision by then. */
export async function sceneStateAt(sceneId: string, at: string, signal?: AbortSignal): Promise<MarkerRevision[]> {
  return (await http.get(`${apiPath`/api/scenes/${sceneId}/state`}?at=${encodeURIComponent(at)}`, SceneState, { signal })).revisions
}

/** Sets the marker's review (mentors and owners, never on their own marker); answers with the marker. */
export async function reviewMarker(markerId: string, body: MarkerReviewBody): Promise<Marker> {
  return (await http.put(apiPath`/api/markers/${markerId}/review`, body, MarkerResponse)).marker
}
