import type { AuditVerifyDto } from '../../../shared/schemas/audit.ts'
import type { Clock } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import { readCheckpoints } from './audit.checkpoint.ts'
import { loadAuditKeys } from './audit.key.ts'
import { verifyAuditChain } from './audit.repository.ts'

/**
 * Walks the chain with the audit key against every signed checkpoint file (docs/security.md, "Audit trail
 * integrity"): what `npm run audit:verify` prints and the audit-trail screen's "Verify the chain" shows.
 */
export async function verifyTrail(db: Db, clock: Clock): Promise<AuditVerifyDto> {
  const keys = loadAuditKeys()
  const { claims, problems } = readCheckpoints({ keys })
  const t0 = performance.now()
  const r = await verifyAuditChain(db, { keys, checkpoints: claims, clock })
  return {
    ok: r.ok && !problems.length,
    checked: r.checked,
    checkpoints: claims.length,
    badId: r.badId ?? null,
    badSeq: r.badSeq ?? null,
    problem: r.problem ?? null,
    checkpoint: r.checkpoint ?? null,
    checkpointProblems: problems,
    headId: r.headId ?? null,
    headSeq: r.headSeq ?? null,
    headHash: r.headHash ?? null,
    unkeyed: r.unkeyed ?? 0,
    unsealed: r.unsealed ?? 0,
    seconds: Math.round(performance.now() - t0) / 1000,
  }
}

let running: Promise<AuditVerifyDto> | null = null

/** One walk at a time per process: a request that comes while one runs gets that walk's answer. */
export function verifyTrailOnce(db: Db, clock: Clock): Promise<AuditVerifyDto> {
  running ??= verifyTrail(db, clock).finally(() => {
    running = null
  })
  return running
}
