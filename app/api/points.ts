import { Hierarchy, NearestResponse } from '@shared/schemas'
import type { NearestPoint, PointSource, Vec3 } from '@/viewer/types'
import { ApiError, ClientErrorCode, apiErrorFrom, apiPath, http } from './http'

/** The viewer's data over the Spanmark API: hierarchy and nearest as JSON, tiles as bytes (the browser keeps their ETag). */
export const apiPointSource: PointSource = {
  async hierarchy(scanId, signal) {
    return http.get(apiPath`/api/scans/${scanId}/hierarchy`, Hierarchy, { signal })
  },

  async tile(scanId, nodeKey, signal) {
    const path = apiPath`/api/scans/${scanId}/tiles/${nodeKey}`
    let response: Response
    try {
      response = await fetch(path, { credentials: 'same-origin', signal, headers: { Accept: 'application/octet-stream' } })
    } catch (cause) {
      if (cause instanceof DOMException && cause.name === 'AbortError') throw cause
      throw new ApiError(0, ClientErrorCode.network, 'Cannot reach the Spanmark server. Check the connection and try again.')
    }
    if (!response.ok) {
      let data: unknown
      try {
        data = await response.json()
      } catch {
        data = undefined
      }
      throw apiErrorFrom(response.status, data)
    }
    return new Uint8Array(await response.arrayBuffer())
  },

  async nearest(scanId: string, p: Vec3, signal?: AbortSignal): Promise<NearestPoint | null> {
    const query = new URLSearchParams({ x: String(p[0]), y: String(p[1]), z: String(p[2]), k: '1' })
    const answer = await http.get(`${apiPath`/api/scans/${scanId}/nearest`}?${query}`, NearestResponse, { signal })
    return answer.points[0] ?? null
  },
}
