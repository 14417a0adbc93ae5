import type { Scan } from '@shared/schemas'
import type { TestServer } from './server'

type Agent = ReturnType<TestServer['agent']>

/** Polls a scan until `until` holds (default: ready or failed); returns every state seen on the way. */
export async function waitForScan(agent: Agent, scanId: string, until: (s: Scan) => boolean = (s) => s.status === 'ready' || s.status === 'failed', timeoutMs = 60_000, everyMs = 40): Promise<{ scan: Scan; seen: Scan[] }> {
  const seen: Scan[] = []
  const deadline = Date.now() + timeoutMs
  for (;;) {
    const res = await agent.get(`/api/scans/${scanId}`)
    if (res.status !== 200) throw new Error(`GET scan ${scanId}: ${res.status} ${JSON.stringify(res.body)}`)
    const scan = res.body.scan as Scan
    seen.push(scan)
    if (until(scan)) return { scan, seen }
    if (Date.now() > deadline) throw new Error(`scan ${scanId} still ${scan.status} (${scan.stage}) after ${timeoutMs} ms`)
    await new Promise((r) => setTimeout(r, everyMs))
  }
}

export function upload(agent: Agent, projectId: string, bytes: Buffer | Uint8Array, fileName: string, fields: Record<string, string> = {}) {
  let req = agent.post(`/api/projects/${projectId}/scans`)
  for (const [k, v] of Object.entries(fields)) req = req.field(k, v)
  return req.attach('file', Buffer.from(bytes), fileName)
}
