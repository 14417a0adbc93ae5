import fs from 'node:fs'
import path from 'node:path'
import express from 'express'
import helmet from 'helmet'
import { pinoHttp } from 'pino-http'
import { scrubUrl } from './logger'
import { apiNotFound, errorHandler } from './middleware/errors'
import { originCheck } from './middleware/origin'
import { createLimiters } from './middleware/rateLimits'
import { guestMiddleware } from './middleware/guest'
import { sessionMiddleware } from './middleware/session'
import { apiRoutes } from './routes'
import { mountRoutes } from './routes/mount'
import type { RouteDef } from './routes/registry'
import type { Services } from './types'

/** Builds the Express app; it listens nowhere, so tests hand it to supertest or to a server of their own. */
export function createApp(services: Services, routes: RouteDef[] = apiRoutes): express.Express {
  const { config } = services
  const app = express()
  app.disable('x-powered-by')
  app.set('trust proxy', config.trustProxy)
  app.use(
    helmet({
      contentSecurityPolicy: {
        directives: {
          // PrimeVue's theme writes style elements at run time.
          'style-src': ["'self'", "'unsafe-inline'"],
          'img-src': ["'self'", 'data:', 'blob:'],
          'font-src': ["'self'", 'data:'],
          // Resumable uploads PUT their parts straight to object storage (presigned URLs).
          'connect-src': ["'self'", ...(services.objects.partOrigin ? [services.objects.partOrigin] : [])],
          'worker-src': ["'self'", 'blob:'],
          'upgrade-insecure-requests': config.secureCookies ? [] : null,
        },
      },
      strictTransportSecurity: config.secureCookies,
    }),
  )
  app.use(
    pinoHttp({
      logger: services.log,
      serializers: {
        req: (req: { method: string; url: string; id: unknown }) => ({ id: req.id, method: req.method, url: scrubUrl(req.url) }),
        res: (res: { statusCode: number }) => ({ statusCode: res.statusCode }),
      },
      autoLogging: { ignore: (req) => !(req.url ?? '').startsWith('/api/') },
      // One readable sentence per request ("GET /api/health 200 in 6 ms"); the fields stay for JSON readers.
      customSuccessMessage: (req, res, ms) => `${req.method} ${scrubUrl((req as { originalUrl?: string }).originalUrl ?? req.url ?? '')} ${res.statusCode} in ${Math.round(ms)} ms`,
      customErrorMessage: (req, res, err) => `${req.method} ${scrubUrl((req as { originalUrl?: string }).originalUrl ?? req.url ?? '')} ${res.statusCode}: ${err.message}`,
    }),
  )

  const api = express.Router()
  api.use(express.json({ limit: config.jsonLimit }))
  api.use(sessionMiddleware(services.auth))
  api.use(guestMiddleware(services))
  api.use(originCheck(() => [services.publicOrigin()]))
  mountRoutes(api, routes, services, createLimiters(config.rateLimits, services.db))
  api.use(apiNotFound)
  app.use('/api', api)

  const index = path.join(config.clientDir, 'index.html')
  if (fs.existsSync(index)) {
    app.use(express.static(config.clientDir, { index: false, maxAge: '1h', setHeaders: (res, file) => {
      // Vite fingerprints everything under assets/, so those never change.
      if (file.includes(`${path.sep}assets${path.sep}`)) res.setHeader('Cache-Control', 'public, max-age=31536000, immutable')
    } }))
    app.get('/{*splat}', (_req, res) => res.setHeader('Cache-Control', 'no-cache').sendFile(index))
  } else {
    app.get('/{*splat}', (_req, res) => res.status(503).type('text').send('The client is not built: run `npm start` (it builds it) or `npx vite build`.'))
  }
  app.use(errorHandler)
  return app
}
