import type { Clock, DueJob } from '../clock.ts'
import type { Config } from '../config.ts'
import type { Db } from '../db/index.ts'
import { createChangeRequestJob } from '../features/change-requests/change-requests.jobs.ts'
import { createTripTestJob } from '../features/trip-tests/trip-tests.jobs.ts'
import { createBypassJob } from '../features/bypasses/bypasses.jobs.ts'
import { createMailJob } from '../features/mail/mail.worker.ts'
import { createAuditCheckpointJob } from '../features/audit/audit.checkpoint.ts'
import { createReconciliationJob } from '../features/reconciliation/reconciliation.jobs.ts'

/** Every scheduled job of the product. Later features add theirs here. */
export function createJobs(db: Db, config: Config, clock: Clock): DueJob[] {
  return [
    createMailJob(db, config, clock),
    createChangeRequestJob(db, config, clock),
    createTripTestJob(db, config, clock),
    createBypassJob(db, config, clock),
    createReconciliationJob(db, config, clock),
    createAuditCheckpointJob(db, clock),
  ]
}
