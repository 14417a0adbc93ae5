import { ErrorCode } from '@shared/schemas/common'
import type { z } from 'zod'

/** The one error type handlers throw; the error middleware turns it into `{ error: { code, message } }`. */
export class HttpError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly field?: string,
  ) {
    super(message)
    this.name = 'HttpError'
  }

  static badRequest(message: string, field?: string) {
    return new HttpError(400, ErrorCode.invalidInput, message, field)
  }
  static unauthenticated(message = 'Sign in first.') {
    return new HttpError(401, ErrorCode.unauthenticated, message)
  }
  static forbidden(message: string) {
    return new HttpError(403, ErrorCode.forbidden, message)
  }
  static notFound(message = 'Not found.') {
    return new HttpError(404, ErrorCode.notFound, message)
  }
  static conflict(message: string, field?: string) {
    return new HttpError(409, ErrorCode.conflict, message, field)
  }
}

const WHERE: Record<string, string> = { body: 'body', query: 'query', params: 'path' }

/** A zod failure as a 400 that names the first bad field, e.g. "body.email: must be an e-mail address". */
export function fromZod(error: z.ZodError, where: 'body' | 'query' | 'params'): HttpError {
  const issue = error.issues[0]
  const field = issue && issue.path.length ? issue.path.map(String).join('.') : undefined
  const place = field ? `${WHERE[where]}.${field}` : WHERE[where]
  const message = issue ? `${place}: ${issue.message}` : `${place} is not valid`
  return new HttpError(400, ErrorCode.invalidInput, message, field)
}
