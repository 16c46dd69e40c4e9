import { randomUUID } from 'node:crypto'
import { existsSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import compression from 'compression'
import express, { Router } from 'express'
import expressStaticGzip from 'express-static-gzip'
import helmet from 'helmet'
import { pingDatabase } from './db/index.ts'
import { pinoHttp } from 'pino-http'
import { ErrorCode } from '../shared/errors.ts'
import type { AppDeps } from './deps.ts'
import { standbyState } from './db/read-standby.ts'
import { AppError } from './errors.ts'
import {
  createInstrumentsRouter,
  createLimitsRouter,
  createResponseSheetsRouter,
  createProcessesRouter,
} from './features/register/register.router.ts'
import { createImportsRouter } from './features/register/imports.router.ts'
import { createHistoryImportsRouter } from './features/history/history-import.router.ts'
import { createChangeRequestsRouter } from './features/change-requests/change-requests.router.ts'
import { createChangeProposalsRouter } from './features/change-proposals/change-proposals.router.ts'
import {
  createDegradationRouter,
  createTestDeferralsRouter,
  createTripTestsRouter,
} from './features/trip-tests/trip-tests.router.ts'
import { createBypassesRouter, createBypassReviewRouter } from './features/bypasses/bypasses.router.ts'
import { createShiftHandoverRouter } from './features/shift-handover/shift-handover.router.ts'
import { createAuditRouter } from './features/audit/audit.router.ts'
import {
  createAlarmFiguresRouter,
  createAlarmJournalsRouter,
  createAlarmStatesRouter,
  createReplaysRouter,
} from './features/alarms/alarms.router.ts'
import { createDemandsRouter } from './features/demands/demands.router.ts'
import { createMailRouter } from './features/mail/mail.router.ts'
import {
  createFindingsRouter,
  createLimitReconciliationsRouter,
  createReconciliationRunsRouter,
  createReconciliationSourcesRouter,
} from './features/reconciliation/reconciliation.router.ts'
import { createSessionRouter } from './features/session/session.router.ts'
import { createAreasRouter, createSitesRouter } from './features/sites/sites.router.ts'
import { createTestClockRouter } from './features/test-support/test-clock.router.ts'
import { createAccountRouter, createUsersRouter } from './features/users/users.router.ts'
import { requireCsrf } from './middleware/csrf.ts'
import { currentUser, requireUser } from './middleware/current-user.ts'
import { errorHandler } from './middleware/error-handler.ts'
import { inputGuard } from './middleware/input-guard.ts'
import { logger } from './logger.ts'
import { createSessionMiddleware } from './middleware/session.ts'

const distDir = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../dist')

/** Builds the Express app from its dependencies; listening happens elsewhere (server/index.ts). */
export function createApp(deps: AppDeps, options: { serveClient?: boolean } = {}) {
  const app = express()
  app.set('trust proxy', deps.config.trustProxy)
  app.disable('x-powered-by')
  app.use(
    helmet({
      contentSecurityPolicy: {
        directives: {
          'default-src': ["'self'"],
          'img-src': ["'self'", 'data:', 'blob:'],
          'style-src': ["'self'", "'unsafe-inline'"],
          'script-src': ["'self'"],
          'font-src': ["'self'", 'data:'],
          'connect-src': ["'self'"],
          'upgrade-insecure-requests': null,
        },
      },
    }),
  )

  // one log line per API request: request id (the one its audit events carry), user, route, status, duration;
  // never a body, header or cookie (server/logger.ts)
  app.use(
    '/api',
    pinoHttp({
      logger,
      genReqId: (req) =>
        (typeof req.headers['x-request-id'] === 'string' && req.headers['x-request-id'].slice(0, 64)) || randomUUID(),
      serializers: {
        req: (req: { id: unknown; method: string; url: string }) => ({ id: req.id, method: req.method, url: req.url }),
        res: (res: { statusCode: number }) => ({ statusCode: res.statusCode }),
      },
      // pino-http asks at the request's start and again at its end and writes both answers: user and route are
      // known only at the end, so they are given once, then (else the line carried "userId" twice)
      customProps: (req, res) => {
        if (!res.headersSent) return {}
        const r = req as express.Request
        return { userId: r.user?.id ?? null, route: r.route?.path ? `${r.baseUrl}${r.route.path}` : undefined }
      },
      // a line the logger's level leaves out is not made at all ('silent': no bindings, no child logger)
      customLogLevel: (_req, res, err) => {
        const level = err || res.statusCode >= 500 ? 'error' : 'info'
        return logger.isLevelEnabled(level) ? level : 'silent'
      },
    }),
  )
  // responses compressed (brotli or gzip, as the browser accepts); built assets come precompressed (below)
  app.use(compression({ threshold: 1024 }))

  const api = Router()
  api.use(express.json({ limit: '1mb' }))
  api.use(inputGuard)
  api.get('/health', async (_req, res) => {
    try {
      await pingDatabase(deps.db)
      res.json({ status: 'ok', database: 'ok', readStandby: standbyState(deps) })
    } catch {
      res.setHeader('Retry-After', '5')
      res.status(503).json({ status: 'degraded', database: 'unreachable' })
    }
  })
  api.use(createSessionMiddleware(deps.config, deps.pool))
  api.use(currentUser(deps))
  api.use(requireCsrf)
  api.use('/session', createSessionRouter(deps))
  if (deps.config.NODE_ENV === 'test') api.use('/test', createTestClockRouter(deps))
  api.use(requireUser)
  api.use('/account', createAccountRouter(deps))
  api.use('/users', createUsersRouter(deps))
  api.use('/sites', createSitesRouter(deps))
  api.use('/areas', createAreasRouter(deps))
  api.use('/processes', createProcessesRouter(deps))
  api.use('/instruments', createInstrumentsRouter(deps))
  api.use('/limits/:id/degradation', createDegradationRouter(deps))
  api.use('/limits/:id/reconciliations', createLimitReconciliationsRouter(deps))
  api.use('/limits', createLimitsRouter(deps))
  api.use('/alarm-response-sheets', createResponseSheetsRouter(deps))
  api.use('/trip-tests', createTripTestsRouter(deps))
  api.use('/test-deferrals', createTestDeferralsRouter(deps))
  api.use('/bypasses', createBypassesRouter(deps))
  api.use('/bypass-review', createBypassReviewRouter(deps))
  api.use('/shift-handovers', createShiftHandoverRouter(deps))
  api.use('/imports', createImportsRouter(deps))
  api.use('/history-imports', createHistoryImportsRouter(deps))
  api.use('/change-requests', createChangeRequestsRouter(deps))
  api.use('/change-proposals', createChangeProposalsRouter(deps))
  api.use('/audit-events', createAuditRouter(deps))
  api.use('/demands', createDemandsRouter(deps))
  api.use('/mail', createMailRouter(deps))
  api.use('/alarm-journals', createAlarmJournalsRouter(deps))
  api.use('/alarm-figures', createAlarmFiguresRouter(deps))
  api.use('/alarm-states', createAlarmStatesRouter(deps))
  api.use('/replays', createReplaysRouter(deps))
  api.use('/reconciliation-sources', createReconciliationSourcesRouter(deps))
  api.use('/reconciliation-runs', createReconciliationRunsRouter(deps))
  api.use('/findings', createFindingsRouter(deps))
  api.use((_req, _res, next) => next(new AppError(404, ErrorCode.NOT_FOUND, 'No such API endpoint')))
  app.use('/api', api)

  if (options.serveClient !== false && existsSync(distDir)) {
    // hashed file names under /assets never change: cached for a year; index.html is asked for again every time
    app.use(
      expressStaticGzip(distDir, {
        enableBrotli: true,
        orderPreference: ['br', 'gzip'],
        index: false,
        serveStatic: {
          setHeaders: (res, file) => {
            if (file.startsWith(path.join(distDir, 'assets') + path.sep))
              res.setHeader('Cache-Control', 'public, max-age=31536000, immutable')
            else if (/^index\.html(\.br|\.gz)?$/.test(path.basename(file))) res.setHeader('Cache-Control', 'no-cache')
            else res.setHeader('Cache-Control', 'public, max-age=3600')
          },
        },
      }),
    )
    app.get(/^\/(?!api\/).*/, (_req, res) => {
      res.setHeader('Cache-Control', 'no-cache')
      res.sendFile(path.join(distDir, 'index.html'))
    })
  }
  app.use(errorHandler)
  return app
}
