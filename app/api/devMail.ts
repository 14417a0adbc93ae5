import { DevMailList, type DevMailMessage } from '@shared/schemas'
import { http } from './http'

/** Mail caught by the local fake mail server, newest first (404 in production). */
export async function listDevMail(signal?: AbortSignal): Promise<DevMailMessage[]> {
  return (await http.get('/api/dev/mail', DevMailList, { signal })).messages
}

export function clearDevMail(): Promise<void> {
  return http.deleteNoContent('/api/dev/mail')
}
