import { Health } from '@shared/schemas'
import { send } from './http'

/** 200 when all is well; 503 still carries a Health body (database down). */
export function getHealth(signal?: AbortSignal): Promise<Health> {
  return send('GET', '/api/health', Health, { signal, alsoAccept: [503] })
}
