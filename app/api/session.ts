import { SessionInfo } from '@shared/schemas'
import { http } from './http'

/** Who this browser is: a signed-in person, a guest with a viewing pass, both or neither (always 200). */
export function getSession(): Promise<SessionInfo> {
  return http.get('/api/session', SessionInfo)
}
