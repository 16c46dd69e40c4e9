import { Router } from 'express'
import {
  type AuditEventDto,
  type AuditEventList,
  AuditExportQuerySchema,
  auditActionLabel,
  AuditQuerySchema,
} from '../../../shared/schemas/audit.ts'
import { auditReadScope } from '../../../shared/abilities/index.ts'
import { authorize } from '../../authorize.ts'
import { csvPart } from '../../csv.ts'
import type { AppDeps } from '../../deps.ts'
import { asDownload } from '../../route-handlers.ts'
import { auditExportPage, entityTitles, listAuditEvents, recordedFields, siteCodesById } from './audit.repository.ts'
import { verifyTrailOnce } from './audit.verify.ts'

/** `2026-12-03 07:15:02` in the time zone. */
function localTime(d: Date, timeZone: string): string {
  const p = Object.fromEntries(
    new Intl.DateTimeFormat('en-GB', {
      timeZone,
      hourCycle: 'h23',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      second: '2-digit',
    })
      .formatToParts(d)
      .map((x) => [x.type, x.value]),
  )
  return `${p.year}-${p.month}-${p.day} ${p.hour}:${p.minute}:${p.second}`
}

const EXPORT_PAGE = 2000

/**
 * `GET /api/audit-events`: newest first, filtered, narrowed to the reader's sites; `cursor` (an id) pages without
 * OFFSET. `GET /export.csv`: the same events (all pages) as CSV. `POST /verify`: runs the chain verifier.
 */
export function createAuditRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    authorize(req.ability, 'read', 'AuditEvent')
    const q = AuditQuerySchema.parse(req.query)
    const { total, rows } = await listAuditEvents(deps.db, auditReadScope(req.user), q)
    const titles = await entityTitles(
      deps.db,
      rows.map((r) => ({ entityType: r.entity_type, entityId: r.entity_id })),
    )
    const siteCodes = await siteCodesById(deps.db)
    const items: AuditEventDto[] = rows.map((r) => {
      const t = titles.get(`${r.entity_type}:${r.entity_id}`)
      const siteId = r.effective_site_id
      return {
        id: Number(r.id),
        at: r.occurred_at.toISOString(),
        actorId: r.actor_id,
        actorName: r.actorName,
        action: r.action,
        entityType: r.entity_type,
        entityId: r.entity_id,
        entityTitle: t?.title ?? null,
        entityLimitId: t?.limitId ?? null,
        siteId,
        siteCode: siteId === null ? null : (siteCodes.get(siteId) ?? null),
        ...recordedFields(r),
        prevHash: r.prev_hash,
        hash: r.hash,
        seq: r.seq === null ? null : Number(r.seq),
      }
    })
    const list: AuditEventList = {
      total,
      items,
      nextCursor: rows.length === q.pageSize ? Number(rows[rows.length - 1].id) : null,
    }
    res.json(list)
  })

  router.get('/export.csv', async (req, res) => {
    authorize(req.ability, 'read', 'AuditEvent')
    const q = AuditExportQuerySchema.parse(req.query)
    const scope = auditReadScope(req.user)
    const siteCodes = await siteCodesById(deps.db)
    asDownload(res, 'text/csv; charset=utf-8', 'limitkeeper-audit-trail.csv')
    const fields = [
      'Event',
      'Time (UTC)',
      `Time (${q.tz})`,
      'Site',
      'Who',
      'Who (e-mail)',
      'Action',
      'Action code',
      'Record type',
      'Record id',
      'Record',
      'Reason',
      'Before',
      'After',
      'Request id',
      'Address',
      'Hash',
    ]
    let cursor: number | null = null
    let first = true
    // keyset pages, newest first, written as they are read
    for (;;) {
      const rows = await auditExportPage(deps.db, scope, q, cursor, EXPORT_PAGE)
      const titles = await entityTitles(
        deps.db,
        rows.map((r) => ({ entityType: r.entity_type, entityId: r.entity_id })),
      )
      const lines = rows.map((r) => [
        Number(r.id),
        r.occurred_at.toISOString(),
        localTime(r.occurred_at, q.tz),
        r.effective_site_id === null ? '' : (siteCodes.get(r.effective_site_id) ?? r.effective_site_id),
        r.actorName ?? (r.actor_id === null ? 'system' : `#${r.actor_id}`),
        r.actorEmail ?? '',
        auditActionLabel(r.action),
        r.action,
        r.entity_type,
        r.entity_id ?? '',
        titles.get(`${r.entity_type}:${r.entity_id}`)?.title ?? '',
        r.reason ?? '',
        r.before === null ? '' : JSON.stringify(r.before),
        r.after === null ? '' : JSON.stringify(r.after),
        r.request_id ?? '',
        r.ip ?? '',
        r.hash ?? 'not yet sealed',
      ])
      res.write(csvPart(fields, lines, first))
      first = false
      if (rows.length < EXPORT_PAGE) break
      cursor = Number(rows[rows.length - 1].id)
    }
    res.end()
  })

  router.post('/verify', async (req, res) => {
    authorize(req.ability, 'verify', 'AuditEvent')
    res.json(await verifyTrailOnce(deps.db, deps.clock))
  })
  return router
}
