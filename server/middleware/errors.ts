import type { ErrorRequestHandler, RequestHandler } from 'express'
import { ErrorCode } from '@shared/schemas/common'
import { HttpError } from '../errors'

export const apiNotFound: RequestHandler = (req, _res, next) => {
  next(new HttpError(404, ErrorCode.notFound, `No API route ${req.method} ${req.baseUrl}${req.path}.`))
}

interface BodyParserError {
  type?: string
  status?: number
  limit?: number
}

/** Registered last: every error leaves as `{ error: { code, message, field? } }`. */
export const errorHandler: ErrorRequestHandler = (err, req, res, _next) => {
  let e: HttpError
  const bp = err as BodyParserError
  if (err instanceof HttpError) e = err
  else if (bp.type === 'entity.too.large') e = new HttpError(413, ErrorCode.payloadTooLarge, `The request body is larger than the limit of ${bp.limit} bytes.`)
  else if (bp.type === 'entity.parse.failed') e = new HttpError(400, ErrorCode.badRequest, 'The request body is not valid JSON.')
  else if (bp.type === 'charset.unsupported' || bp.type === 'encoding.unsupported') e = new HttpError(415, ErrorCode.badRequest, 'The request body must be UTF-8 JSON.')
  else {
    req.log?.error({ err }, 'unhandled error')
    e = new HttpError(500, ErrorCode.internal, 'Something went wrong on the server; it has been logged.')
  }
  if (res.headersSent) return
  res.status(e.status).json({ error: { code: e.code, message: e.message, ...(e.field ? { field: e.field } : {}) } })
}
