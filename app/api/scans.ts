import { ScanList, ScanResponse, type Scan, type ScanUpdateBody } from '@shared/schemas'
import { type ApiError, apiPath, http } from './http'

export async function listScans(projectId: string, signal?: AbortSignal): Promise<Scan[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/scans`, ScanList, { signal })).scans
}

export async function getScan(scanId: string, signal?: AbortSignal): Promise<Scan> {
  return (await http.get(apiPath`/api/scans/${scanId}`, ScanResponse, { signal })).scan
}

/** Rename, or set the instrument's stated point uncertainty (metres; null goes back to the estimate). */
export async function updateScan(scanId: string, body: ScanUpdateBody): Promise<Scan> {
  return (await http.patch(apiPath`/api/scans/${scanId}`, body, ScanResponse)).scan
}

/** Removes the scan with its tiles and its original file. */
export function deleteScan(scanId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/scans/${scanId}`)
}

/** Where the original file downloads from (a plain link: the browser streams it to disk). */
export function originalUrl(scanId: string): string {
  return apiPath`/api/scans/${scanId}/original`
}

/** The server's upload limit in bytes, read from its 413 message ("... upload limit of 2 GiB (2147483648 bytes)."). */
export function uploadLimitFrom(error: ApiError): number | null {
  if (error.status !== 413) return null
  const match = /\((\d+) bytes\)/.exec(error.message)
  return match ? Number(match[1]) : null
}
