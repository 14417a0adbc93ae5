import type { Request, RequestHandler, Response, Router } from 'express'
import type { z } from 'zod'
import { fromZod, HttpError } from '../errors'
import { authorize } from '../services/access'
import type { Services } from '../types'
import type { LimiterName, RouteDef } from './registry'

function parse<T>(schema: z.ZodType<T> | undefined, value: unknown, where: 'body' | 'query' | 'params'): T {
  if (!schema) return undefined as T
  const r = schema.safeParse(value ?? {})
  if (!r.success) throw fromZod(r.error, where)
  return r.data
}

/**
 * Mounts the registry on a router. The order of the checks is fixed for every route: rate limit, session
 * (401), path parameters (400), membership (404) and right (403), then body and query (400), then the
 * handler. Only then does a lacking role get 403 rather than a validation message about its body.
 */
export function mountRoutes(router: Router, routes: RouteDef[], services: Services, limiters: Record<LimiterName, RequestHandler>): void {
  for (const def of routes) {
    if (def.access.kind === 'dev' && !services.config.devMail) continue
    const handlers: RequestHandler[] = []
    if (def.limiter) handlers.push(limiters[def.limiter])
    handlers.push(async (req: Request, res: Response) => {
      const access = def.access
      if ((access.kind === 'user' || access.kind === 'project') && !req.user) throw HttpError.unauthenticated()
      const params = parse(def.params, req.params, 'params')
      const membership =
        access.kind === 'project' ? await authorize(services.db, req.user!.id, params as Record<string, unknown>, access.right) : null
      const body = parse(def.body, req.body, 'body')
      const query = parse(def.query, req.query, 'query')
      const reply = await def.handler({ params, body, query, user: req.user, membership, services, req, res })
      if (res.headersSent) return
      if (!reply || reply.body === undefined) res.status(reply?.status ?? 204).end()
      else res.status(reply.status ?? 200).json(reply.body)
    })
    router[def.method](def.path, ...handlers)
  }
}
