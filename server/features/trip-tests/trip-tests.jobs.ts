import { TZDate } from '@date-fns/tz'
import { getISOWeek, getISOWeekYear } from 'date-fns'
import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Db } from '../../db/index.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import {
  DUE_SOON_TEST_STATUSES,
  isTestOverdue,
  OVERDUE_TEST_STATUSES,
} from '../../../shared/domain/rules/trip-tests.ts'
import { recipientsOf } from '../users/users.repository.ts'
import * as repo from './trip-tests.repository.ts'
import { computeSchedules, localDate } from './trip-tests.service.ts'

const SYSTEM: AuditContext = { actorId: null, requestId: 'job:trip-tests', ip: null }

/** Sends a site's digest of overdue and soon-due tests to its technicians and safety engineers, once per period. */
export async function runDigestForSite(
  db: Db,
  config: Config,
  clock: Clock,
  siteId: number,
  period: string,
  ctx: AuditContext = SYSTEM,
) {
  return db.transaction().execute(async (trx) => {
    if (!(await repo.claimDigest(trx, siteId, period, clock.now()))) return { sent: 0, overdue: 0, dueSoon: 0 }
    const site = await repo.findSite(trx, siteId)
    const rows = await repo.digestRows(trx, siteId, [...OVERDUE_TEST_STATUSES, ...DUE_SOON_TEST_STATUSES])
    const overdue = rows.filter((r) => isTestOverdue(r.test_status))
    const dueSoon = rows.filter((r) => !isTestOverdue(r.test_status))
    const line = (r: (typeof rows)[number]) =>
      `${r.tag} (${r.area}) — ${r.test_status === 'never_tested' ? 'never tested' : `due ${r.test_due_date}`}`
    const to = await recipientsOf(trx, siteId, 'tripTestDigest')
    await mailNotice(trx, clock, to, {
      subject: `Trip tests due at ${site.name} (${period.startsWith('manual') ? 'on request' : period})`,
      topic: 'trip_test_digest',
      paragraphs: [
        `Trip tests at ${site.name}: ${overdue.length} overdue or never tested, ${dueSoon.length} due soon ` +
          '(within 30 days, less for short intervals) or in their grace period.',
        ...(overdue.length ? [`Overdue or never tested:\n${overdue.map(line).join('\n')}`] : []),
        ...(dueSoon.length ? [`Due soon:\n${dueSoon.map(line).join('\n')}`] : []),
      ],
      link: { url: `${config.appUrl}/tests/schedule?siteId=${siteId}`, label: 'Open the test schedule' },
    })
    await appendAudit(trx, clock, ctx, {
      action: 'trip_test.digest',
      entityType: 'Site',
      entityId: siteId,
      after: { period, overdue: overdue.length, dueSoon: dueSoon.length, recipients: to.length },
    })
    return { sent: to.length, overdue: overdue.length, dueSoon: dueSoon.length }
  })
}

/**
 * Escalates each degraded limit whose repair deadline has passed: mail to the site's plant managers (and shift
 * supervisors, who run on the compensating measures), once per deadline; home and handover show it until it clears.
 */
export async function escalatePassedRepairDeadlines(db: Db, config: Config, clock: Clock, now: Date) {
  let escalated = 0
  for (const d of await repo.unescalatedDeadlines(db)) {
    if (d.repair_deadline === null || d.repair_deadline >= localDate(now, d.time_zone)) continue
    await db.transaction().execute(async (trx) => {
      const open = await repo.lockOpenDegradation(trx, d.limit_id)
      if (!open || open.id !== d.id || open.escalated_at !== null) return
      await repo.updateDegradation(trx, d.id, { escalated_at: now })
      const to = await recipientsOf(trx, d.site_id, 'repairDeadlinePassed')
      await mailNotice(trx, clock, to, {
        subject: `OVERDUE REPAIR: ${d.tag} is still degraded`,
        topic: 'trip_test',
        paragraphs: [
          `The repair deadline ${d.repair_deadline} of degraded limit ${d.tag} has passed and the limit is still ` +
            'degraded.',
          'Continued operation on compensating measures is allowed only for a limited time: decide now whether to ' +
            'repair and retest, shut down, or record a new deadline under management of change.',
        ],
        link: recordLink(config.appUrl, 'tests', 'trip test', open.test_id),
      })
      await appendAudit(trx, clock, SYSTEM, {
        action: 'limit.repair_deadline_passed',
        entityType: 'Limit',
        entityId: d.limit_id,
        after: { degradationId: d.id, repairDeadline: d.repair_deadline, recipients: to.length },
      })
      escalated++
    })
  }
  return escalated
}

/**
 * Refreshes the test status of the limits whose status the calendar changes by today (no others: a test, deferral,
 * change or policy edit refreshes its limits itself), batch by batch, each batch's schedules written in one
 * statement. Returns how many limits it refreshed (docs/domain/due-dates.md).
 */
export async function refreshChangedSchedules(db: Db, now: Date, batchSize = 500): Promise<number> {
  let refreshed = 0
  let afterId = 0
  for (;;) {
    const batch = await repo.limitsWithStatusChangeDue(db, now, afterId, batchSize)
    if (!batch.length) return refreshed
    await db.transaction().execute(async (trx) => {
      const schedules = await computeSchedules(
        trx,
        batch.map((b) => b.id),
        now,
      )
      await repo.updateLimitSchedules(
        trx,
        [...schedules].map(([limitId, s]) => ({ limitId, ...s })),
      )
    })
    refreshed += batch.length
    afterId = batch[batch.length - 1]!.id
  }
}

/**
 * Refreshes the test statuses the calendar changed, escalates passed repair deadlines, then sends weekly digests.
 */
export function createTripTestJob(
  db: Db,
  config: Config,
  clock: Clock,
): DueJob<{ refreshed: number; digests: number; escalated: number }> {
  return {
    name: 'trip-tests.schedule',
    intervalSec: 3600,
    async runDue(now: Date) {
      const refreshed = await refreshChangedSchedules(db, now)
      const escalated = await escalatePassedRepairDeadlines(db, config, clock, now)
      let digests = 0
      const sites = await repo.listSiteZones(db)
      for (const s of sites) {
        // Monday from 07:00 in the site's own time zone, once per ISO week
        const local = new TZDate(now.getTime(), s.time_zone)
        if (local.getDay() !== 1 || local.getHours() < 7) continue
        const period = `${getISOWeekYear(local)}-W${String(getISOWeek(local)).padStart(2, '0')}`
        const r = await runDigestForSite(db, config, clock, s.id, period)
        if (r.sent) digests++
      }
      return { refreshed, digests, escalated }
    },
  }
}
