import { TZDate } from '@date-fns/tz'
import { getISOWeek, getISOWeekYear } from 'date-fns'
import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Db } from '../../db/index.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { enqueueMail, mailBodies } from '../mail/mail.outbox.ts'
import { findUsersWithRole } from '../users/users.repository.ts'
import { refreshTestSchedule } from './trip-tests.service.ts'

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
    const inserted = await trx
      .insertInto('digest_log')
      .values({ site_id: siteId, kind: 'trip_tests', period, sent_at: clock.now() })
      .onConflict((oc) => oc.doNothing())
      .returning('site_id')
      .executeTakeFirst()
    if (!inserted) return { sent: 0, overdue: 0, dueSoon: 0 }
    const site = await trx
      .selectFrom('site')
      .select(['name', 'time_zone'])
      .where('id', '=', siteId)
      .executeTakeFirstOrThrow()
    const rows = await trx
      .selectFrom('limit_function')
      .innerJoin('area', 'area.id', 'limit_function.area_id')
      .select(['limit_function.tag', 'limit_function.test_status', 'limit_function.test_due_date', 'area.name as area'])
      .where('limit_function.site_id', '=', siteId)
      .where('limit_function.status', '=', 'active')
      .where('limit_function.test_status', 'in', ['overdue', 'in_grace', 'due_soon', 'never_tested'])
      .orderBy('limit_function.test_due_date', (ob) => ob.asc().nullsFirst())
      .execute()
    const overdue = rows.filter((r) => r.test_status === 'overdue' || r.test_status === 'never_tested')
    const dueSoon = rows.filter((r) => r.test_status === 'due_soon' || r.test_status === 'in_grace')
    const line = (r: (typeof rows)[number]) =>
      `${r.tag} (${r.area}) — ${r.test_status === 'never_tested' ? 'never tested' : `due ${r.test_due_date}`}`
    const to = await findUsersWithRole(trx, siteId, ['technician', 'safety_engineer'])
    const bodies = mailBodies(
      [
        `Trip tests at ${site.name}: ${overdue.length} overdue or never tested, ${dueSoon.length} due within 30 days or in their grace period.`,
        ...(overdue.length ? [`Overdue or never tested:\n${overdue.map(line).join('\n')}`] : []),
        ...(dueSoon.length ? [`Due soon:\n${dueSoon.map(line).join('\n')}`] : []),
      ],
      { url: `${config.appUrl}/tests/schedule?siteId=${siteId}`, label: 'Open the test schedule' },
    )
    await enqueueMail(
      trx,
      clock,
      to.map((u) => ({
        to: u.email,
        subject: `Trip tests due at ${site.name} (${period.startsWith('manual') ? 'on request' : period})`,
        ...bodies,
        topic: 'trip_test_digest',
      })),
    )
    await appendAudit(trx, clock, ctx, {
      action: 'trip_test.digest',
      entityType: 'Site',
      entityId: siteId,
      after: { period, overdue: overdue.length, dueSoon: dueSoon.length, recipients: to.length },
    })
    return { sent: to.length, overdue: overdue.length, dueSoon: dueSoon.length }
  })
}

/** Refreshes every active limit's test status (statuses move with the calendar), then sends weekly digests. */
export function createTripTestJob(
  db: Db,
  config: Config,
  clock: Clock,
): DueJob<{ refreshed: number; digests: number }> {
  return {
    name: 'trip-tests.schedule',
    intervalSec: 3600,
    async runDue(now: Date) {
      const ids = await db.selectFrom('limit_function').select('id').where('status', '=', 'active').execute()
      for (let i = 0; i < ids.length; i += 200) {
        await db.transaction().execute(async (trx) => {
          for (const { id } of ids.slice(i, i + 200)) await refreshTestSchedule(trx, id, now)
        })
      }
      let digests = 0
      const sites = await db.selectFrom('site').select(['id', 'time_zone']).execute()
      for (const s of sites) {
        // Monday from 07:00 in the site's own time zone, once per ISO week
        const local = new TZDate(now.getTime(), s.time_zone)
        if (local.getDay() !== 1 || local.getHours() < 7) continue
        const period = `${getISOWeekYear(local)}-W${String(getISOWeek(local)).padStart(2, '0')}`
        const r = await runDigestForSite(db, config, clock, s.id, period)
        if (r.sent) digests++
      }
      return { refreshed: ids.length, digests }
    },
  }
}
