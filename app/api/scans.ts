import { ScanList, ScanResponse, type Scan, type ScanFormat, type ScanUpdateBody } from '@shared/schemas'
import { ApiError, ClientErrorCode, apiErrorFrom, apiPath, http, parseWith } from './http'

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

export interface UploadProgress {
  loaded: number
  total: number
}

export interface UploadOptions {
  name?: string
  format?: ScanFormat
  onProgress?: (progress: UploadProgress) => void
  signal?: AbortSignal
}

function readJson(text: string): unknown {
  if (text === '') return undefined
  try {
    return JSON.parse(text) as unknown
  } catch {
    return undefined
  }
}

/**
 * Sends one file (the route takes one per request) and resolves with the queued scan (202).
 * XMLHttpRequest rather than fetch: only it reports upload progress. Same origin, so the session cookie
 * and the Origin header the server's CSRF guard wants go with it. Cancelling rejects with an AbortError.
 */
export function uploadScan(projectId: string, file: File, options: UploadOptions = {}): Promise<Scan> {
  const path = apiPath`/api/projects/${projectId}/scans`
  return new Promise<Scan>((resolve, reject) => {
    const { signal } = options
    if (signal?.aborted) {
      reject(new DOMException('The upload was cancelled.', 'AbortError'))
      return
    }
    const form = new FormData()
    // Fields before the file, so the server has them when the file part starts.
    if (options.name) form.append('name', options.name)
    if (options.format) form.append('format', options.format)
    form.append('file', file, file.name)

    const xhr = new XMLHttpRequest()
    const onAbort = () => xhr.abort()
    const done = () => signal?.removeEventListener('abort', onAbort)
    xhr.open('POST', path)
    xhr.setRequestHeader('Accept', 'application/json')
    xhr.upload.onprogress = (event) => {
      options.onProgress?.({ loaded: event.loaded, total: event.lengthComputable ? event.total : file.size })
    }
    xhr.onload = () => {
      done()
      const data = readJson(xhr.responseText)
      if (xhr.status < 200 || xhr.status >= 300) {
        reject(apiErrorFrom(xhr.status, data))
        return
      }
      try {
        resolve(parseWith(ScanResponse, data, path).scan)
      } catch (error) {
        reject(error)
      }
    }
    xhr.onerror = () => {
      done()
      reject(new ApiError(0, ClientErrorCode.network, 'The upload was cut off before the server answered. Check the connection and try again.'))
    }
    xhr.onabort = () => {
      done()
      reject(new DOMException('The upload was cancelled.', 'AbortError'))
    }
    signal?.addEventListener('abort', onAbort, { once: true })
    xhr.send(form)
  })
}

/** The server's upload limit in bytes, read from its 413 message ("... upload limit of 2 GiB (2147483648 bytes)."). */
export function uploadLimitFrom(error: ApiError): number | null {
  if (error.status !== 413) return null
  const match = /\((\d+) bytes\)/.exec(error.message)
  return match ? Number(match[1]) : null
}
