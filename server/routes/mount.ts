import fs from 'node:fs'
import path from 'node:path'
import crypto from 'node:crypto'
import type { NextFunction, Request, RequestHandler, Response, Router } from 'express'
import multer from 'multer'
import type { z } from 'zod'
import { ErrorCode } from '@shared/schemas/common'
import { fromZod, HttpError } from '../errors'
import { authorize, authorizeRigKey } from '../services/access'
import { admitUpload, fileTooLarge } from '../services/scans'
import type { Services } from '../types'
import type { LimiterName, Membership, RigKey, RouteDef } from './registry'

function parse<T>(schema: z.ZodType<T> | undefined, value: unknown, where: 'body' | 'query' | 'params'): T {
  if (!schema) return undefined as T
  const r = schema.safeParse(value ?? {})
  if (!r.success) throw fromZod(r.error, where)
  return r.data
}

interface Gate {
  params: unknown
  membership: Membership | null
  rigKey: RigKey | null
}

function bearer(req: Request): string | null {
  const h = req.headers.authorization
  const m = h ? /^Bearer\s+(\S+)$/i.exec(h) : null
  return m ? m[1]! : null
}

function uploadMiddleware(services: Services, field: string): RequestHandler {
  const spool = path.join(services.config.dataDir, 'spool')
  fs.mkdirSync(spool, { recursive: true })
  const limit = services.config.uploads.limitBytes
  const upload = multer({
    storage: multer.diskStorage({ destination: spool, filename: (_req, _file, cb) => cb(null, `${Date.now()}-${crypto.randomBytes(8).toString('hex')}`) }),
    limits: { fileSize: limit, files: 1, fields: 20, fieldSize: 64 * 1024 },
  }).single(field)
  return (req, res, next) => {
    upload(req, res, (err: unknown) => {
      if (!err) return next()
      if (err instanceof multer.MulterError) {
        if (err.code === 'LIMIT_FILE_SIZE') return next(fileTooLarge(limit))
        if (err.code === 'LIMIT_UNEXPECTED_FILE' || err.code === 'LIMIT_FILE_COUNT') {
          const where = err.field ? `body.${err.field}: ` : ''
          return next(HttpError.badRequest(`${where}send one file, in the multipart field '${field}'.`, err.field))
        }
        return next(HttpError.badRequest(`The multipart upload was refused: ${err.message}.`, err.field))
      }
      next(err)
    })
  }
}

/**
 * Mounts the registry on a router. The order of the checks is fixed for every route: rate limit, session
 * or rig key (401), path parameters (400), membership (404) and right (403), then the upload itself, body
 * and query (400), then the handler. Only then does a lacking role get 403 rather than a validation
 * message about its body, and a refused upload never reaches the disk.
 */
export function mountRoutes(router: Router, routes: RouteDef[], services: Services, limiters: Record<LimiterName, RequestHandler>): void {
  for (const def of routes) {
    if (def.access.kind === 'dev' && !services.config.devMail) continue
    const handlers: RequestHandler[] = []
    if (def.limiter) handlers.push(limiters[def.limiter])

    handlers.push(async (req: Request, res: Response, next: NextFunction) => {
      const access = def.access
      const token = access.kind === 'project' && access.rigKey && !req.user ? bearer(req) : null
      if (access.kind === 'user' && !req.user && req.guest) throw HttpError.forbidden('A viewing pass only shows its project: this needs a Spanmark account.')
      if ((access.kind === 'user' || access.kind === 'project') && !req.user && !req.guest && !token) throw HttpError.unauthenticated()
      const params = parse(def.params, req.params, 'params')
      let gate: Gate = { params, membership: null, rigKey: null }
      if (access.kind === 'project') {
        if (token) {
          const { membership, rigKey } = await authorizeRigKey(services.db, token, params as Record<string, unknown>, access.right)
          gate = { params, membership, rigKey }
        } else gate.membership = await authorize(services.db, { userId: req.user?.id ?? null, guest: req.guest }, params as Record<string, unknown>, access.right)
      }
      res.locals.gate = gate
      // An upload takes one of its project's slots before a byte of the file is received (services/scans.ts).
      if (def.upload && gate.membership) {
        const release = await admitUpload(services, gate.membership.projectId, Number(req.headers['content-length'] ?? 0))
        res.on('close', release)
      }
      next()
    })

    if (def.upload) handlers.push(uploadMiddleware(services, def.upload.field))

    handlers.push(async (req: Request, res: Response) => {
      const gate = res.locals.gate as Gate
      const file = req.file ?? null
      try {
        const body = parse(def.body, req.body, 'body')
        const query = parse(def.query, req.query, 'query')
        const reply = await def.handler({ params: gate.params, body, query, user: req.user, guest: req.guest, rigKey: gate.rigKey, membership: gate.membership, file, services, req, res })
        if (res.headersSent) return
        if (!reply || reply.body === undefined) res.status(reply?.status ?? 204).end()
        else res.status(reply.status ?? 200).json(reply.body)
      } finally {
        if (file) await fs.promises.rm(file.path, { force: true })
      }
    })
    router[def.method](def.path, ...handlers)
  }
}
