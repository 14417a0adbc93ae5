import type { Marker } from '@shared/schemas'
import type { signUpAgent } from './server'

type Agent = Awaited<ReturnType<typeof signUpAgent>>['agent']

/**
 * Polls a marker until its check is stored for a revision after `revisionAbove` (0: any stored check), and
 * returns it; fails naming the marker's state after `ms`.
 */
export async function waitChecked(agent: Agent, id: string, revisionAbove = 0, ms = 30_000): Promise<Marker> {
  const deadline = Date.now() + ms
  for (;;) {
    const m = (await agent.get(`/api/markers/${id}`).expect(200)).body.marker as Marker
    if (m.check.state !== 'pending' && m.check.basedOn > revisionAbove) return m
    if (Date.now() > deadline) throw new Error(`marker ${id} still ${m.check.state} at revision ${m.check.basedOn}`)
    await new Promise((r) => setTimeout(r, 50))
  }
}
