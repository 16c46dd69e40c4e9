// npm run audit:checkpoint — writes a signed checkpoint of the audit chain's head and mails it to the auditors
// (docs/security.md, "Audit trail integrity").
import { systemClock } from '../clock.ts'
import { createDb } from '../db/index.ts'
import { localAppUrl } from '../db/local.ts'
import { checkpointAndMail, checkpointDir } from '../features/audit/audit.checkpoint.ts'

const url = process.env.DATABASE_URL ?? localAppUrl()
const { db } = createDb(url, 2)
try {
  const c = await checkpointAndMail(db, systemClock)
  process.stdout.write(
    `Checkpoint written: ${checkpointDir()}/${c.file} ` +
      `(head id ${c.headId} at chain position ${c.headSeq}, ${c.count} events); ` +
      `mailed to ${c.mailed} auditor(s).\n`,
  )
} catch (err) {
  process.stderr.write(`${err instanceof Error ? err.message : err}\n`)
  process.exitCode = 1
} finally {
  await db.destroy()
}
