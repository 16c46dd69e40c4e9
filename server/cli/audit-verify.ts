// npm run audit:verify — walks the audit chain, checks every keyed link with the audit key and the chain against
// every signed checkpoint, and reports the first problem with the event and checkpoint concerned (exit 1 when broken).
import { systemClock } from '../clock.ts'
import { createDb } from '../db/index.ts'
import { localAppUrl } from '../db/local.ts'
import { checkpointDir } from '../features/audit/audit.checkpoint.ts'
import { verifyTrail } from '../features/audit/audit.verify.ts'

const out = (line: string) => process.stdout.write(`${line}\n`)

// the same local-cluster settings as `npm start` and server/db/pg.sh when DATABASE_URL is unset
const url = process.env.DATABASE_URL ?? localAppUrl()
const { db } = createDb(url, 2)
try {
  const r = await verifyTrail(db, systemClock)
  for (const p of r.checkpointProblems) out(`Checkpoint problem: ${p}`)
  if (r.problem === null) {
    out(
      `Audit trail intact: ${r.checked} events checked in ${r.seconds.toFixed(2)} s ` +
        `against ${r.checkpoints} checkpoint(s) in ${checkpointDir()}; ` +
        `head id ${r.headId ?? '-'} at chain position ${r.headSeq ?? '-'} hash ${r.headHash ?? '-'}`,
    )
    if (r.unsealed) out(`${r.unsealed} event(s) written in the last minute are not yet sealed.`)
    if (r.unkeyed) out(`${r.unkeyed} event(s) from before keyed links are hash-chained only.`)
    if (!r.ok) process.exitCode = 1
  } else {
    const where = r.badId !== null ? `event ${r.badId}` : `chain position ${r.badSeq}`
    out(
      `Audit trail BROKEN at ${where}: ${r.problem} (${r.checked} events before it are intact)` +
        `${r.checkpoint ? ` [checkpoint ${r.checkpoint}]` : ''}`,
    )
    process.exitCode = 1
  }
} catch (err) {
  process.stderr.write(`${err instanceof Error ? err.message : err}\n`)
  process.exitCode = 2
} finally {
  await db.destroy()
}
