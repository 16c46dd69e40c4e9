import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Db } from '../../db/index.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { policyOf } from '../sites/sites.service.ts'
import { recipientsOf } from '../users/users.repository.ts'
import { findOpenBypassesForJob, lockBypassDeadlines, updateBypass } from './bypasses.repository.ts'
import { lapsesAt } from '../../../shared/domain/rules/bypasses.ts'

const HOUR = 3_600_000
const SYSTEM: AuditContext = { actorId: null, requestId: 'job:bypasses', ip: null }

/**
 * Bypass deadlines (docs/bypasses.md#lapse-overdue-and-escalation): authorizations not put in force in time lapse;
 * the requester is warned before the planned end; an active bypass past its end is overdue (never closed by the
 * clock): the shift supervisors are told at once, then the plant manager every few hours until it is removed.
 */
export function createBypassJob(
  db: Db,
  config: Config,
  clock: Clock,
): DueJob<{ lapsed: number; warned: number; overdue: number; escalated: number }> {
  const link = (id: number) => recordLink(config.appUrl, 'bypasses', 'bypass', id)
  return {
    name: 'bypasses.deadlines',
    intervalSec: 60,
    async runDue(now: Date) {
      const counts = { lapsed: 0, warned: 0, overdue: 0, escalated: 0 }
      const rows = await findOpenBypassesForJob(db)
      for (const b of rows) {
        const policy = policyOf(b)
        await db.transaction().execute(async (trx) => {
          const cur = await lockBypassDeadlines(trx, b.id)
          const lapse = lapsesAt(
            {
              status: cur.status,
              authorizedAt: b.authorized_at,
              plannedStart: cur.planned_start,
            },
            policy,
          )
          if (lapse && now.getTime() > lapse.getTime()) {
            await updateBypass(trx, b.id, { status: 'lapsed', updated_at: now })
            await appendAudit(trx, clock, SYSTEM, {
              action: 'bypass.lapse',
              entityType: 'Bypass',
              entityId: b.id,
              after: { status: 'lapsed' },
            })
            counts.lapsed++
            return
          }
          if (cur.status !== 'active') return
          const end = cur.planned_end.getTime()
          if (
            !cur.expiry_warned_at &&
            now.getTime() >= end - policy.bypassExpiryWarningHours * HOUR &&
            now.getTime() < end
          ) {
            await updateBypass(trx, b.id, { expiry_warned_at: now })
            await mailNotice(trx, clock, [{ email: b.requester_email }], {
              subject: `Bypass of ${b.tag} ends at ${cur.planned_end.toISOString().slice(11, 16)} UTC`,
              topic: 'bypass',
              paragraphs: [
                `The bypass #${b.id} of ${b.tag} reaches its planned end at ${cur.planned_end.toISOString()}.`,
                'Remove it on record once the process value is clear of the limit, or ask for an extension.',
              ],
              link: link(b.id),
            })
            counts.warned++
          }
          if (now.getTime() > end && !cur.overdue_notified_at) {
            await updateBypass(trx, b.id, { overdue_notified_at: now })
            const sups = await recipientsOf(trx, b.site_id, 'bypassOverdue')
            await mailNotice(trx, clock, sups, {
              subject: `OVERDUE bypass: ${b.tag}`,
              topic: 'bypass',
              paragraphs: [
                `The bypass #${b.id} of ${b.tag} is past its planned end (${cur.planned_end.toISOString()}) ` +
                  'and still active: the limit protects nothing.',
                'Remove it on record or have it extended by a signed authorization.',
              ],
              link: link(b.id),
            })
            await appendAudit(trx, clock, SYSTEM, {
              action: 'bypass.overdue',
              entityType: 'Bypass',
              entityId: b.id,
              after: { plannedEnd: cur.planned_end.toISOString() },
            })
            counts.overdue++
          }
          const every = policy.bypassEscalationEveryHours * HOUR
          const lastEsc = cur.last_escalation_at?.getTime() ?? end
          if (now.getTime() > end && now.getTime() - lastEsc >= every) {
            await updateBypass(trx, b.id, { last_escalation_at: now })
            const managers = await recipientsOf(trx, b.site_id, 'bypassEscalated')
            const hours = ((now.getTime() - end) / HOUR).toFixed(1)
            await mailNotice(trx, clock, managers, {
              subject: `Escalation: bypass of ${b.tag} overdue for ${hours} h`,
              topic: 'bypass',
              paragraphs: [`The bypass #${b.id} of ${b.tag} has been overdue for ${hours} h and is still active.`],
              link: link(b.id),
            })
            await appendAudit(trx, clock, SYSTEM, {
              action: 'bypass.escalate',
              entityType: 'Bypass',
              entityId: b.id,
              after: { overdueHours: Number(hours) },
            })
            counts.escalated++
          }
        })
      }
      return counts
    },
  }
}
