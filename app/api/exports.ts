import { ExportList, ExportResponse, type Export, type ExportCreateBody } from '@shared/schemas'
import { apiPath, http } from './http'

/** Queues an export of the scene, or of one placement with `instanceId`. */
export async function createExport(sceneId: string, body: ExportCreateBody): Promise<Export> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/exports`, body, ExportResponse)).export
}

/** The scene's latest exports, newest first. */
export async function listExports(sceneId: string, signal?: AbortSignal): Promise<Export[]> {
  return (await http.get(apiPath`/api/scenes/${sceneId}/exports`, ExportList, { signal })).exports
}

/** Where the finished file downloads from (a plain link: the browser saves it). */
export function exportFileUrl(exportId: string): string {
  return apiPath`/api/exports/${exportId}/file`
}
