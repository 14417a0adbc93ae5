import {
  RegistrationReport,
  RegistrationResponse,
  type Registration,
  type RegistrationFitBody,
  type RegistrationRefineBody,
} from '@shared/schemas'
import { apiPath, http } from './http'

/** The closed-form fit of the tie pairs (snapped on the server); a 400 names the pair and side at fault. */
export async function fitRegistration(sceneId: string, body: RegistrationFitBody): Promise<Registration> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/registrations/fit`, body, RegistrationResponse)).registration
}

/** Starts ICP (202): poll `getRegistration` while `refine.status` is 'running'. */
export async function refineRegistration(sceneId: string, body: RegistrationRefineBody): Promise<Registration> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/registrations/refine`, body, RegistrationResponse)).registration
}

export async function getRegistration(registrationId: string, signal?: AbortSignal): Promise<Registration> {
  return (await http.get(apiPath`/api/registrations/${registrationId}`, RegistrationResponse, { signal })).registration
}

export async function acceptRegistration(registrationId: string): Promise<Registration> {
  return (await http.post(apiPath`/api/registrations/${registrationId}/accept`, {}, RegistrationResponse)).registration
}

/** Answers with the new record of kind 'undo'. */
export async function undoRegistration(registrationId: string): Promise<Registration> {
  return (await http.post(apiPath`/api/registrations/${registrationId}/undo`, {}, RegistrationResponse)).registration
}

/** Each placement with the registration that holds for it, and the scene's recorded registrations. */
export async function getRegistrationReport(sceneId: string, signal?: AbortSignal): Promise<RegistrationReport> {
  return http.get(apiPath`/api/scenes/${sceneId}/registrations`, RegistrationReport, { signal })
}
