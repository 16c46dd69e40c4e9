import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Transaction } from 'kysely'
import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import { appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { policyOf } from '../sites/sites.service.ts'
import { voidSignatures } from '../signatures/signatures.ts'
import { recipientsOf } from '../users/users.repository.ts'
import * as repo from './change-requests.repository.ts'

const HOUR = 3_600_000
const SYSTEM = { actorId: null, requestId: 'job:change-requests', ip: null }

/**
 * Runs `work` for each request in a transaction of its own once `claim` has taken it there; a request another run
 * (or another instance) took first is left alone. Answers how many were worked.
 */
async function forEachClaimed<R>(
  db: Db,
  requests: R[],
  claim: (trx: Transaction<Database>, cr: R) => Promise<boolean>,
  work: (trx: Transaction<Database>, cr: R) => Promise<void>,
): Promise<number> {
  let worked = 0
  for (const cr of requests) {
    await db.transaction().execute(async (trx) => {
      if (!(await claim(trx, cr))) return
      await work(trx, cr)
      worked++
    })
  }
  return worked
}

/**
 * Reminders and time limits of change requests: temporary changes expiring within 24 h (reminder to revert, once),
 * temporary changes expired and not reverted (the proposer and the site's shift supervisors told once a day until a
 * reversal is implemented),
 * emergency changes unapproved 24 h after implementation (flagged; approvers and plant manager told), approvals
 * that expired before implementation (voided; the request goes back to submitted).
 */
export function createChangeRequestJob(
  db: Db,
  config: Config,
  clock: Clock,
): DueJob<{ reminders: number; flagged: number; expired: number; toRevert: number }> {
  const link = (id: number) => recordLink(config.appUrl, 'changes', 'change request', id)
  return {
    name: 'change-requests.deadlines',
    intervalSec: 300,
    async runDue(now: Date) {
      const temporary = await repo.temporaryChangesDue(db, new Date(now.getTime() + 24 * HOUR))
      const reminders = await forEachClaimed(
        db,
        temporary,
        (trx, cr) =>
          repo.claimRequest(trx, cr.id, { revert_reminder_at: now }, { column: 'revert_reminder_at', isNull: true }),
        async (trx, cr) => {
          await mailNotice(trx, clock, [{ email: cr.email }], {
            subject:
              `Temporary change #${cr.id} ` +
              `expires ${cr.expires_at!.toISOString().slice(0, 16).replace('T', ' ')} UTC: revert it`,
            topic: 'change_request',
            paragraphs: [
              `The temporary change "${cr.title}" expires at ${cr.expires_at!.toISOString()}.`,
              'Revert it on the device through a change request before then, or extend it by a new approved request.',
            ],
            link: link(cr.id),
          })
          await appendAudit(trx, clock, SYSTEM, {
            action: 'change_request.revert_reminder',
            entityType: 'ChangeRequest',
            entityId: cr.id,
          })
        },
      )
      // expired, to be reverted: once a day until a reversal is implemented (docs/change-requests.md)
      const noticeBefore = new Date(now.getTime() - 24 * HOUR)
      const toRevert = await forEachClaimed(
        db,
        await repo.expiredTemporaryChanges(db, now, noticeBefore),
        (trx, cr) => repo.claimRequest(trx, cr.id, { expired_notice_at: now }, { noticeBefore }),
        async (trx, cr) => {
          const supervisors = await recipientsOf(trx, cr.site_id, 'temporaryChangeExpired')
          const to = [...new Set([cr.email, ...supervisors.map((u) => u.email)])]
          const ended = cr.expires_at!.toISOString().slice(0, 16).replace('T', ' ')
          await mailNotice(
            trx,
            clock,
            to.map((email) => ({ email })),
            {
              subject: `Temporary change #${cr.id} expired ${ended} UTC and is not reverted`,
              topic: 'change_request',
              paragraphs: [
                `The temporary change "${cr.title}" passed its end at ${cr.expires_at!.toISOString()} ` +
                  'and is still on the device: expired, to be reverted.',
                'Revert it through a reversal change request (read back on the device), ' +
                  'or make it permanent by a new approved request. ' +
                  'This notice repeats daily until a reversal is implemented.',
              ],
              link: link(cr.id),
            },
          )
          await appendAudit(trx, clock, SYSTEM, {
            action: 'change_request.expired_not_reverted',
            entityType: 'ChangeRequest',
            entityId: cr.id,
            after: { notified: to },
          })
        },
      )
      const emergencies = await repo.unapprovedEmergencies(db, new Date(now.getTime() - 24 * HOUR))
      const flagged = await forEachClaimed(
        db,
        emergencies,
        (trx, cr) =>
          repo.claimRequest(
            trx,
            cr.id,
            { emergency_flagged_at: now },
            { column: 'emergency_flagged_at', isNull: true },
          ),
        async (trx, cr) => {
          const to = await recipientsOf(trx, cr.site_id, 'emergencyChangeUnapproved')
          await mailNotice(trx, clock, to, {
            subject: `Emergency change #${cr.id} is still unapproved after 24 h`,
            topic: 'change_request',
            paragraphs: [
              `The emergency change "${cr.title}" was implemented more than 24 hours ago and has not been approved.`,
              'Review and sign it, or reverse it.',
            ],
            link: link(cr.id),
          })
          await appendAudit(trx, clock, SYSTEM, {
            action: 'change_request.emergency_flagged',
            entityType: 'ChangeRequest',
            entityId: cr.id,
          })
        },
      )
      const approvalDays = (cr: Parameters<typeof policyOf>[0]) => policyOf(cr).approvalExpiryDays
      const lapsed = (await repo.approvedNotStarted(db)).filter(
        (cr) => cr.approved_at && now.getTime() > cr.approved_at.getTime() + approvalDays(cr) * 24 * HOUR,
      )
      const expired = await forEachClaimed(
        db,
        lapsed,
        (trx, cr) =>
          repo.claimRequest(
            trx,
            cr.id,
            { status: 'submitted', approved_at: null, updated_at: now },
            { status: 'approved' },
          ),
        async (trx, cr) => {
          const days = approvalDays(cr)
          await voidSignatures(
            trx,
            clock,
            'ChangeRequest',
            cr.id,
            `approval expired: not implemented within ${days} days`,
            ['approved'],
          )
          await mailNotice(trx, clock, [{ email: cr.email }], {
            subject: `Approval of change request #${cr.id} expired`,
            topic: 'change_request',
            paragraphs: [
              `The change "${cr.title}" was not implemented within ${days} days of its approval. ` +
                'The approvals are void and it needs approving again.',
            ],
            link: link(cr.id),
          })
          await appendAudit(trx, clock, SYSTEM, {
            action: 'change_request.approval_expired',
            entityType: 'ChangeRequest',
            entityId: cr.id,
            after: { status: 'submitted' },
          })
        },
      )
      return { reminders, flagged, expired, toRevert }
    },
  }
}
