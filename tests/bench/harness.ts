// What the benchmarks share: a throwaway cluster migrated for them, the demo plant, the demo engineer acting on the
// services directly, and running a benchmark file as a script.
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { createAppAbility, defineRulesFor } from '../../shared/abilities/index.ts'
import { systemClock } from '../../server/clock.ts'
import { loadConfig } from '../../server/config.ts'
import type { Db } from '../../server/db/index.ts'
import { createDb } from '../../server/db/index.ts'
import { migrateToLatest } from '../../server/db/migrate.ts'
import type pg from 'pg'
import { findRolesByUserIds } from '../../server/features/users/users.repository.ts'
import { seedDemo } from '../../server/seed/demo.ts'
import { startThrowawayCluster } from '../pg-cluster.ts'

export interface Cluster {
  superUrl: string
  ownerUrl: string
  appUrl: string
  stop(): Promise<void>
}

/** A throwaway cluster (tests/pg-cluster.ts) with its own database, migrated as the owner role. */
export async function startCluster(): Promise<Cluster> {
  const cluster = await startThrowawayCluster('limitkeeper-bench-', 'lk_bench')
  try {
    await migrateToLatest(cluster.ownerUrl)
  } catch (err) {
    await cluster.stop()
    throw err
  }
  return cluster
}

/**
 * Seeds the demo plant (server/seed/demo.ts) as the owner role, over a connection of its own; `opts.register` as
 * seedDemo takes it (the demo register of limits, or the sites and accounts only).
 */
export async function seedDemoPlant(ownerUrl: string, opts: { register?: boolean } = {}) {
  const owner = createDb(ownerUrl, 2).db
  try {
    await seedDemo(owner, systemClock, opts)
  } finally {
    await owner.destroy()
  }
}

/**
 * The demo engineer as the services see a signed-in user: the services' dependencies on the runtime role's
 * connection, the engineer's id, roles and CASL ability.
 */
export async function demoEngineer(app: { db: Db; pool: pg.Pool }, appUrl: string) {
  const config = loadConfig({ NODE_ENV: 'test', DATABASE_URL: appUrl, SMTP_PORT: '1' })
  const deps = { db: app.db, pool: app.pool, clock: systemClock, config }
  const user = await app.db
    .selectFrom('app_user')
    .select('id')
    .where('email', '=', 'engineer@fernhollow.example')
    .executeTakeFirstOrThrow()
  const roles = (await findRolesByUserIds(app.db, [user.id])).get(user.id) ?? []
  const ability = createAppAbility(defineRulesFor({ id: user.id, roles }))
  return { deps, user, roles, ability }
}

/** Runs a benchmark's main when its file is started as a script (not when imported): exit 1 only on a failure. */
export function runAsScript(moduleUrl: string, run: () => Promise<void>) {
  if (!process.argv[1] || path.resolve(process.argv[1]) !== fileURLToPath(moduleUrl)) return
  run().then(
    () => process.exit(0),
    (err) => {
      console.error(err instanceof Error ? (err.stack ?? err.message) : err)
      process.exit(1)
    },
  )
}
