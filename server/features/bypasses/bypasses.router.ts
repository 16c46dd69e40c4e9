import { Router } from 'express'
import { toCsv } from '../../csv.ts'
import { z } from 'zod'
import {
  ActivateBypassInputSchema,
  AuthorizeBypassInputSchema,
  BypassFilterSchema,
  BypassListQuerySchema,
  BypassReviewQuerySchema,
  CreateBypassInputSchema,
  RejectBypassInputSchema,
  RemoveBypassInputSchema,
} from '../../../shared/schemas/bypasses.ts'
import { IdSchema } from '../../../shared/schemas/common.ts'
import { allows, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { onReadStandby } from '../../db/read-standby.ts'
import { forbidden } from '../../errors.ts'
import { closingNote, headedTable, renderPdf } from '../../pdf.ts'
import { asDownload, routeHandlers } from '../../route-handlers.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { bypassReview, RISK_CAUTION, riskErosion } from './bypass-review.service.ts'
import * as service from './bypasses.service.ts'

function filters(user: CurrentUser | null, q: z.infer<typeof BypassFilterSchema>) {
  return {
    siteIds: scopeSites(user, q.siteId),
    areaIds: q.areaId,
    processIds: q.processId,
    limitIds: q.limitId,
    requesterIds: q.requesterId,
    authorizerIds: q.authorizerId,
    status: q.status,
    overdue: q.overdue,
    from: q.from ? new Date(q.from) : undefined,
    to: q.to ? new Date(q.to) : undefined,
  }
}

/** `/api/bypasses` with its state changes as sub-resources. */
export function createBypassesRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const q = BypassListQuerySchema.parse(req.query)
    res.json(await service.listBypasses(deps, { ...filters(req.user, q), page: q.page, pageSize: q.pageSize }))
  })
  router.get('/:id', route.read(service.getBypass))
  router.post('/', route.create(CreateBypassInputSchema, service.requestBypass))
  router.post('/:id/authorizations', route.act(AuthorizeBypassInputSchema, service.authorizeBypass))
  router.post('/:id/rejections', async (req, res) => {
    const b = RejectBypassInputSchema.parse(req.body)
    res.json(await service.rejectBypass(deps, req.ability, req.audit, id(req.params.id), b.password, b.comment))
  })
  // the activation's body is optional
  router.post(
    '/:id/activation',
    route.act((b) => ActivateBypassInputSchema.parse(b ?? {}), service.activateBypass),
  )
  router.post('/:id/removal', route.act(RemoveBypassInputSchema, service.removeBypass))
  router.post('/:id/cancellation', route.act(service.cancelBypass))
  return router
}

/**
 * The review needs the `review` ability at every site asked for (plant manager, engineers, approvers, supervisors,
 * auditors).
 */
function reviewSites(req: { user: CurrentUser | null; ability: Parameters<typeof allows>[0] }, requested?: number[]) {
  const sites = scopeSites(req.user, requested).filter((s) =>
    allows(req.ability, 'review', 'BypassReview', { siteId: s }),
  )
  if (!sites.length)
    throw forbidden('The bypass review is for plant managers, engineers, approvers, shift supervisors and auditors')
  return sites
}

/** A figure of hours for the PDF; "—" where nothing happened. */
const fig = (h: number | null) => (h === null ? '—' : `${h.toFixed(1)} h`)

function period(q: { from?: string; to?: string }, now: Date) {
  const to = q.to ? new Date(q.to) : now
  const from = q.from ? new Date(q.from) : new Date(Date.UTC(to.getUTCFullYear() - 1, to.getUTCMonth() + 1, 1))
  return { from, to }
}

/**
 * `GET /api/bypass-review` (history, KPIs, charts), `/export?format=csv|pdf`, `/risk` (risk erosion of SIL-rated
 * limits).
 */
export function createBypassReviewRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    const q = BypassReviewQuerySchema.parse(req.query)
    res.json(
      await onReadStandby(deps, (d) =>
        bypassReview(d, {
          ...filters(req.user, q),
          siteIds: reviewSites(req, q.siteId),
          ...period(q, deps.clock.now()),
        }),
      ),
    )
  })
  router.get('/risk', async (req, res) => {
    const q = BypassFilterSchema.parse(req.query)
    res.json(
      await onReadStandby(deps, (d) =>
        riskErosion(d, {
          siteIds: reviewSites(req, q.siteId),
          areaIds: q.areaId,
          ...period(q, deps.clock.now()),
        }),
      ),
    )
  })
  router.get('/export', async (req, res) => {
    const q = BypassReviewQuerySchema.parse(req.query)
    const r = await onReadStandby(deps, (d) =>
      bypassReview(d, {
        ...filters(req.user, q),
        siteIds: reviewSites(req, q.siteId),
        ...period(q, deps.clock.now()),
      }),
    )
    const rows = r.items.map((b) => ({
      Bypass: b.id,
      Site: b.siteCode,
      Area: b.areaName,
      Limit: b.limitTag,
      Channel: b.channelTag ?? '',
      State: b.status,
      Overdue: b.overdue ? 'yes' : 'no',
      'Requested by': b.requestedBy,
      'Authorized by': b.authorizations
        .filter((a) => a.meaning === 'authorized')
        .map((a) => a.name)
        .join('; '),
      'Planned start': b.plannedStart,
      'Planned end': b.plannedEnd,
      Activated: b.activatedAt ?? '',
      Removed: b.removedAt ?? '',
      'Bypassed h': b.bypassedHours.toFixed(2),
      'Overdue h': b.overdueHours.toFixed(2),
      'Compensating measures': b.compensatingMeasures.join('; '),
      Reason: b.reason,
    }))
    if (q.format === 'pdf') {
      const pdf = await renderPdf({
        pageOrientation: 'landscape',
        content: [
          { text: 'Bypass review', fontSize: 16, bold: true },
          {
            text:
              `${r.period.from.slice(0, 10)} to ${r.period.to.slice(0, 10)} · ` +
              `active now ${r.kpis.activeNow} · overdue now ${r.kpis.overdueNow} · ` +
              `hours this month ${fig(r.kpis.hoursThisMonth)} · average ${fig(r.kpis.averageDurationHours)} · ` +
              `longer than a shift ${r.kpis.longerThanShift} · ` +
              `without compensating measures ${r.kpis.withoutMeasures} · ` +
              `hours degraded ${fig(r.kpis.hoursDegraded)} · ` +
              `test deferrals ${r.kpis.deferralsRequested} requested, ${r.kpis.deferralsApproved} approved, ` +
              `${r.kpis.deferralsWaiting} waiting`,
            margin: [0, 4, 0, 8],
          },
          {
            ...headedTable(
              [24, 28, 60, 50, 60, 60, 64, 64, 34, 34, '*'],
              [
                '#',
                'Site',
                'Limit',
                'State',
                'Requested',
                'Authorized',
                'Start',
                'End',
                'h',
                'Overdue h',
                'Compensating measures',
              ],
              rows.map((x) => [
                x.Bypass,
                x.Site,
                x.Limit,
                x.State,
                x['Requested by'],
                x['Authorized by'],
                x['Planned start'].slice(0, 16),
                x['Planned end'].slice(0, 16),
                x['Bypassed h'],
                x['Overdue h'],
                x['Compensating measures'],
              ]),
            ),
            layout: 'lightHorizontalLines',
            fontSize: 7,
          },
          closingNote(RISK_CAUTION, 12),
        ],
      })
      asDownload(res, 'application/pdf', 'limitkeeper-bypass-review.pdf').send(pdf)
      return
    }
    asDownload(res, 'text/csv; charset=utf-8', 'limitkeeper-bypass-review.csv').send(toCsv(rows))
  })
  return router
}
