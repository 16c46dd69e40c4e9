// npm run audit:verify — walks the audit chain and reports the first broken link (exit 1 when broken).
import { createDb } from '../db/index.ts'
import { localAppUrl } from '../db/local.ts'
import { verifyAuditChain } from '../features/audit/audit.repository.ts'

// the same local-cluster settings as `npm start` and server/db/pg.sh when DATABASE_URL is unset
const url = process.env.DATABASE_URL ?? localAppUrl()
const { db } = createDb(url, 2)
try {
  const t0 = Date.now()
  const r = await verifyAuditChain(db)
  const secs = ((Date.now() - t0) / 1000).toFixed(2)
  if (r.ok)
    console.log(
      `Audit trail intact: ${r.checked} events checked in ${secs} s; head id ${r.headId ?? '-'} hash ${r.headHash ?? '-'}`,
    )
  else {
    console.log(`Audit trail BROKEN at event ${r.badId}: ${r.problem} (${r.checked} events before it are intact)`)
    process.exitCode = 1
  }
} finally {
  await db.destroy()
}
