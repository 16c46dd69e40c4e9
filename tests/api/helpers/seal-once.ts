// A sealer in a process of its own (tests/api/audit.api.test.ts kills it in the middle of a batch): one run of
// sealAuditEvents against DATABASE_URL with the audit key of AUDIT_KEY_FILE, then it prints what it sealed.
import { systemClock } from '../../../server/clock.ts'
import { createDb } from '../../../server/db/index.ts'
import { sealAuditEvents } from '../../../server/features/audit/audit.repository.ts'

const { db } = createDb(process.env.DATABASE_URL!, 1)
try {
  const r = await sealAuditEvents(db, systemClock)
  process.stdout.write(`${JSON.stringify(r)}\n`)
} finally {
  await db.destroy()
}
