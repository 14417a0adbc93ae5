import { MarkerList, MarkerResponse, type Marker, type MarkerCreateBody, type MarkerUpdateBody } from '@shared/schemas'
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
