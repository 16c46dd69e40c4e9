import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Db } from '../../db/index.ts'
import { policyOf } from '../sites/sites.service.ts'
import * as repo from './reconciliation.repository.ts'
import { nextScheduledRun, scheduledRun } from './reconciliation-sources.service.ts'

/**
 * Scheduled reconciliation of live devices (docs/reconciliation.md#schedule): every due source is claimed (its next
 * run moved on by its interval, only if no other instance did) and read; the sources run side by side, and each
 * device read is bounded by the source's timeout, so a device that does not answer yields an "unreachable" finding
 * and never holds up the others.
 */
export function createReconciliationJob(
  db: Db,
  config: Config,
  clock: Clock,
): DueJob<{ runs: number; unreachable: number; failed: number }> {
  return {
    name: 'reconciliation.schedule',
    intervalSec: 60,
    async runDue(now: Date) {
      const due = await repo.findDueSources(db, now)
      const claimed: number[] = []
      for (const s of due) {
        const hours = s.schedule_hours !== null ? Number(s.schedule_hours) : policyOf(s).reconcileLiveEveryHours
        if (await repo.claimSource(db, s.id, s.next_run_at!, nextScheduledRun(now, hours))) claimed.push(s.id)
      }
      const results = await Promise.allSettled(claimed.map((id) => scheduledRun({ db, clock, config }, id)))
      return {
        runs: results.filter((r) => r.status === 'fulfilled').length,
        unreachable: results.filter((r) => r.status === 'fulfilled' && r.value.outcome === 'unreachable').length,
        failed: results.filter((r) => r.status === 'rejected').length,
      }
    },
  }
}
