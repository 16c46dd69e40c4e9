import type { Clock, DueJob } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import { SEAL_BATCH, sealAuditEvents } from './audit.repository.ts'

/** How often the sealer looks for events to seal (seconds): the audit trail shows an event sealed about this late. */
export const SEAL_INTERVAL_SECONDS = 1

/**
 * The job `audit.seal` (docs/adr/0003-audit-hash-chain.md): links the committed unsealed events into the chain, a
 * batch per transaction, until none waits. It runs on its own scheduler (server/index.ts) every second, under the job
 * lease like every job, so with several app instances one of them seals at a time; the seal lock taken in each batch
 * keeps a second sealer (a lease that ran out, `npm run audit:checkpoint`) from interleaving.
 */
export function createAuditSealJob(db: Db, clock: Clock): DueJob<{ sealed: number; headSeq: number }> {
  return {
    name: 'audit.seal',
    intervalSec: SEAL_INTERVAL_SECONDS,
    quiet: true,
    async runDue(_now, signal) {
      let sealed = 0
      let headSeq = 0
      for (;;) {
        const r = await sealAuditEvents(db, clock)
        sealed += r.sealed
        headSeq = r.headSeq
        if (r.sealed < SEAL_BATCH || signal?.aborted) return { sealed, headSeq }
      }
    },
  }
}
