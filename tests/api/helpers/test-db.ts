import { randomBytes } from 'node:crypto'
import pg from 'pg'
import { afterAll, beforeAll, inject } from 'vitest'
import { AdjustableClock } from '../../../server/clock.ts'
import { loadConfig, type Config } from '../../../server/config.ts'
import { createDb, type Db } from '../../../server/db/index.ts'
import type { AppDeps } from '../../../server/deps.ts'
import { seedDemo } from '../../../server/seed/demo.ts'

// the run's audit key (tests/global-setup.ts), for the app and for the command-line tools the tests start
process.env.AUDIT_KEY_FILE ??= inject('auditKeyFile')

function withDb(url: string, db: string) {
  const u = new URL(url)
  u.pathname = `/${db}`
  return u.toString()
}

/** URLs of this file's own database, cloned from the migrated template. */
export interface TestDatabase {
  name: string
  appUrl: string
  ownerUrl: string
  superUrl: string
}

/** Clones the template into a fresh database for this test file and drops it afterwards. */
export async function createTestDatabase(): Promise<TestDatabase & { drop(): Promise<void> }> {
  const name = `t_${randomBytes(6).toString('hex')}`
  // checkpoints of the audit head are per database, as in production one directory serves one database: another
  // file's app (or the job of a process a test starts, which inherits this) must not checkpoint into this one's
  process.env.AUDIT_CHECKPOINT_DIR = `${inject('auditKeyFile')}.checkpoints/${name}`
  const admin = new pg.Client({ connectionString: inject('superUrl') })
  await admin.connect()
  await admin.query(`CREATE DATABASE ${name} TEMPLATE ${inject('templateDb')} OWNER limitkeeper_owner`)
  await admin.query(`GRANT CONNECT, TEMPORARY ON DATABASE ${name} TO limitkeeper_app`)
  await admin.end()
  return {
    name,
    appUrl: withDb(inject('appUrl'), name),
    ownerUrl: withDb(inject('ownerUrl'), name),
    superUrl: withDb(inject('superUrl'), name),
    async drop() {
      const c = new pg.Client({ connectionString: inject('superUrl') })
      await c.connect()
      await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`)
      await c.end()
    },
  }
}

export interface TestContext extends AppDeps {
  clock: AdjustableClock
  database: TestDatabase
  config: Config
}

/**
 * Per test file: a cloned database with the demo plant's sites and accounts (its register with `register: true`), the app's dependencies connected as the runtime role, and a
 * clock the test moves. `ctx` is filled in beforeAll.
 */
export function useTestDb(
  opts: { seed?: boolean; register?: boolean; env?: Record<string, string> } = {},
): TestContext {
  const ctx = {} as TestContext
  let drop: () => Promise<void> = async () => {}
  let ownerDb: Db | null = null
  beforeAll(async () => {
    const database = await createTestDatabase()
    drop = database.drop
    const config = loadConfig({
      NODE_ENV: 'test',
      DATABASE_URL: database.appUrl,
      MIGRATION_DATABASE_URL: database.ownerUrl,
      SMTP_PORT: '1',
      ...opts.env,
    })
    const clock = new AdjustableClock()
    if (opts.seed !== false) {
      ownerDb = createDb(database.ownerUrl, 2).db
      // the demo register (about 150 limits) only where a test asks for it: it costs seconds per file
      await seedDemo(ownerDb, clock, { register: opts.register ?? false })
      await ownerDb.destroy()
      ownerDb = null
    }
    const { db, pool } = createDb(database.appUrl, 10)
    Object.assign(ctx, { db, pool, clock, config, database })
  })
  afterAll(async () => {
    await ctx.db?.destroy()
    await drop()
  })
  return ctx
}
