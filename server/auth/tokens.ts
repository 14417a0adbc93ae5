import crypto from 'node:crypto'

/** One-time and long-lived secrets are stored only as their SHA-256. */
export function hashSecret(secret: string): string {
  return crypto.createHash('sha256').update(secret).digest('hex')
}

/** 32 random bytes, URL-safe, with an optional readable prefix. */
export function newSecret(prefix = ''): string {
  return prefix + crypto.randomBytes(32).toString('base64url')
}
