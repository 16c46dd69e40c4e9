// npm run user:create -- --admin --email a@b.example --name "Full Name" [--site CODE]
// Creates a user (the first admin of a fresh production database). The password is read from LIMITKEEPER_PASSWORD
// or asked for on the terminal.
import { createInterface } from 'node:readline/promises'
import { parseArgs } from 'node:util'
import { z } from 'zod'
import { PasswordSchema } from '../../shared/schemas/users.ts'
import { systemClock } from '../clock.ts'
import { createDb } from '../db/index.ts'
import { appendAudit } from '../features/audit/audit.repository.ts'
import { hashPassword } from '../features/session/passwords.ts'
import { insertMainSite, listSiteCodes } from '../features/sites/sites.repository.ts'
import { insertAdminRoles, insertUser } from '../features/users/users.repository.ts'

const { values } = parseArgs({
  options: {
    admin: { type: 'boolean', default: false },
    email: { type: 'string' },
    name: { type: 'string' },
    site: { type: 'string', multiple: true },
  },
})
const url = process.env.DATABASE_URL
if (!url) {
  console.error('Set DATABASE_URL.')
  process.exit(2)
}
const email = z.email().safeParse(values.email)
if (!email.success || !values.name) {
  console.error('Give --email and --name.')
  process.exit(2)
}
let password = process.env.LIMITKEEPER_PASSWORD
if (!password) {
  const rl = createInterface({ input: process.stdin, output: process.stdout })
  password = await rl.question('Password (at least 12 characters): ')
  rl.close()
}
const pw = PasswordSchema.safeParse(password)
if (!pw.success) {
  console.error(pw.error.issues[0].message)
  process.exit(2)
}
const { db } = createDb(url, 2)
try {
  const hash = await hashPassword(pw.data)
  await db.transaction().execute(async (trx) => {
    const now = systemClock.now()
    const id = await insertUser(trx, {
      email: email.data.toLowerCase(),
      display_name: values.name!,
      password_hash: hash,
      created_at: now,
      updated_at: now,
    })
    let sites = await listSiteCodes(trx)
    if (values.site?.length) sites = sites.filter((s) => values.site!.includes(s.code))
    if (values.admin && !sites.length) {
      sites = [await insertMainSite(trx, now)]
    }
    if (values.admin)
      await insertAdminRoles(
        trx,
        id,
        sites.map((s) => s.id),
      )
    await appendAudit(
      trx,
      systemClock,
      { actorId: null, requestId: 'cli', ip: null },
      {
        action: 'user.create',
        entityType: 'User',
        entityId: id,
        after: { email: email.data, admin: values.admin, sites: sites.map((s) => s.code) },
      },
    )
    console.log(
      `Created user ${id} (${email.data})${values.admin ? ` as admin of ${sites.map((s) => s.code).join(', ')}` : ''}.`,
    )
  })
} catch (err) {
  console.error(err instanceof Error ? err.message : err)
  process.exitCode = 1
} finally {
  await db.destroy()
}
