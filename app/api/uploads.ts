import { ScanResponse, UploadCreated, UploadOne, UploadPartUrls, type Scan } from '@shared/schemas'
import { ApiError, ClientErrorCode, apiPath, http } from './http'

export interface ResumableProgress {
  /** Bytes storage holds (parts confirmed), plus those of the parts on their way. */
  loaded: number
  total: number
  /** Parts storage already held when this upload started or resumed (not sent again). */
  heldAtStart: number
  partCount: number
}

export interface ResumableOptions {
  onProgress?: (progress: ResumableProgress) => void
  signal?: AbortSignal
  /** Parts on their way at once. */
  parallel?: number
  /** Tries of one part before the upload is given up (a dropped connection is tried again). */
  tries?: number
}

function aborted(): DOMException {
  return new DOMException('The upload was cancelled.', 'AbortError')
}

/**
 * PUTs one part's bytes to its presigned URL, straight to object storage (another origin: no cookie goes
 * with it; storage's CORS rules expose the ETag). XMLHttpRequest, since only it reports upload progress.
 */
function putPart(url: string, bytes: Blob, onProgress: (loaded: number) => void, signal?: AbortSignal): Promise<string> {
  return new Promise((resolve, reject) => {
    if (signal?.aborted) return reject(aborted())
    const xhr = new XMLHttpRequest()
    const onAbort = () => xhr.abort()
    const done = () => signal?.removeEventListener('abort', onAbort)
    xhr.open('PUT', url)
    xhr.upload.onprogress = (event) => onProgress(event.loaded)
    xhr.onload = () => {
      done()
      const etag = xhr.getResponseHeader('ETag')
      if (xhr.status >= 200 && xhr.status < 300 && etag) resolve(etag)
      else reject(new ApiError(xhr.status, ClientErrorCode.network, `Object storage refused a part (HTTP ${xhr.status}${etag ? '' : ', no ETag'}).`))
    }
    xhr.onerror = () => {
      done()
      reject(new ApiError(0, ClientErrorCode.network, 'The connection to object storage dropped while a part was on its way.'))
    }
    xhr.onabort = () => {
      done()
      reject(aborted())
    }
    signal?.addEventListener('abort', onAbort, { once: true })
    xhr.send(bytes)
  })
}

function wait(ms: number, signal?: AbortSignal): Promise<void> {
  return new Promise((resolve, reject) => {
    const timer = setTimeout(resolve, ms)
    signal?.addEventListener('abort', () => (clearTimeout(timer), reject(aborted())), { once: true })
  })
}

/** A failure worth another try: the network, or storage or the server busy or down for a moment. */
function transient(error: unknown): boolean {
  return error instanceof ApiError && (error.status === 0 || error.status === 429 || error.status >= 500)
}

/**
 * Sends a file as a resumable upload and resolves with the queued scan. The server finds an unfinished
 * upload of the same file (name, size, last-modified) in the project, so after a reload or a closed
 * laptop only the parts storage does not hold are sent. Parts go a few at a time; a part whose connection
 * drops is tried again, with a fresh URL, after a pause that grows.
 */
export async function uploadResumable(projectId: string, file: File, options: ResumableOptions = {}): Promise<Scan> {
  const { signal } = options
  const parallel = options.parallel ?? 3
  const tries = options.tries ?? 6
  const { upload } = await http.post(apiPath`/api/projects/${projectId}/uploads`, { fileName: file.name, sizeBytes: file.size, lastModified: file.lastModified }, UploadCreated)
  if (signal?.aborted) throw aborted()
  const sizeOf = (n: number) => Math.min(upload.partSize, upload.sizeBytes - (n - 1) * upload.partSize)
  const held = new Set(upload.partsHeld)
  let stored = [...held].reduce((sum, n) => sum + sizeOf(n), 0)
  const moving = new Map<number, number>()
  const report = () => {
    let loaded = stored
    for (const b of moving.values()) loaded += b
    options.onProgress?.({ loaded, total: upload.sizeBytes, heldAtStart: held.size, partCount: upload.partCount })
  }
  report()
  const queue: number[] = []
  for (let n = 1; n <= upload.partCount; n++) if (!held.has(n)) queue.push(n)

  async function sendPart(n: number): Promise<void> {
    const start = (n - 1) * upload.partSize
    for (let attempt = 1; ; attempt++) {
      try {
        const { urls } = await http.post(apiPath`/api/uploads/${upload.id}/part-urls`, { parts: [n] }, UploadPartUrls)
        const etag = await putPart(urls[0]!.url, file.slice(start, start + sizeOf(n)), (b) => (moving.set(n, b), report()), signal)
        await http.put(apiPath`/api/uploads/${upload.id}/parts/${String(n)}`, { etag, sizeBytes: sizeOf(n) }, UploadOne)
        moving.delete(n)
        stored += sizeOf(n)
        report()
        return
      } catch (error) {
        moving.delete(n)
        report()
        if (signal?.aborted) throw aborted()
        if (!transient(error) || attempt >= tries) throw error
        await wait(Math.min(30_000, 500 * 2 ** (attempt - 1)), signal)
      }
    }
  }

  let failed = false
  async function lane(): Promise<void> {
    try {
      for (let n = queue.shift(); n !== undefined && !failed; n = queue.shift()) await sendPart(n)
    } catch (error) {
      failed = true
      throw error
    }
  }
  await Promise.all(Array.from({ length: Math.min(parallel, queue.length) }, lane))
  if (signal?.aborted) throw aborted()
  const path = apiPath`/api/uploads/${upload.id}/complete`
  return (await http.post(path, undefined, ScanResponse)).scan
}
