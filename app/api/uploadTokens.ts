import { UploadTokenCreated, UploadTokenList, type UploadToken } from '@shared/schemas'
import type { z } from 'zod'
import { apiPath, http } from './http'

export type UploadTokenCreated = z.infer<typeof UploadTokenCreated>

/** A project's upload tokens ("rig keys" on screen), revoked ones included. Owners only. */
export async function listUploadTokens(projectId: string, signal?: AbortSignal): Promise<UploadToken[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/upload-tokens`, UploadTokenList, { signal })).tokens
}

/** The answer carries the secret, which the server never shows again. */
export function createUploadToken(projectId: string, body: { label: string; expiresInDays: number }): Promise<UploadTokenCreated> {
  return http.post(apiPath`/api/projects/${projectId}/upload-tokens`, body, UploadTokenCreated)
}

export function revokeUploadToken(tokenId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/upload-tokens/${tokenId}`)
}
