import { Kysely, PostgresDialect } from 'kysely'
import pg from 'pg'
import type { AppDeps } from '../deps.ts'
import { logger } from '../logger.ts'
import { errorField, isConnectionError, type Db } from './index.ts'
import type { Database } from './schema.ts'

/** After the standby failed to answer, reads go to the primary for this long before the standby is tried again. */
export const STANDBY_RETRY_MS = 30_000

// SQLSTATE 40001 on a hot standby: a query cancelled by a conflict with recovery (PostgreSQL manual, "Hot Standby",
// handling query conflicts); answered again on the primary.
const RECOVERY_CONFLICT = '40001'

export interface ReadStandby {
  db: Db
  pool: pg.Pool
  /** Epoch ms until which the standby is not used after a failure. */
  downUntil: number
}

/**
 * A pool on the hot standby named by READ_DATABASE_URL (docs/deployment.md, "A read standby"). It only reads: no
 * change feed (a standby cannot LISTEN) and no writes are ever sent there. Broken connections are discarded as on
 * the primary's pool.
 */
export function createReadStandby(connectionString: string, max = 10): ReadStandby {
  const pool = new pg.Pool({ connectionString, max, connectionTimeoutMillis: 3_000 })
  const onError = (err: Error & { code?: string }) =>
    logger.child({ component: 'db' }).warn({ code: err.code, message: err.message }, 'read standby connection lost')
  pool.on('error', onError)
  pool.on('connect', (client) => client.on('error', onError))
  return { db: new Kysely<Database>({ dialect: new PostgresDialect({ pool }) }), pool, downUntil: 0 }
}

/** 'none' without a standby, 'up' while reads go there, 'down' while they go to the primary after a failure. */
export function standbyState(deps: AppDeps): 'none' | 'up' | 'down' {
  if (!deps.readStandby) return 'none'
  return deps.readStandby.downUntil > deps.clock.now().getTime() ? 'down' : 'up'
}

/**
 * Runs a heavy read (register list and export, bypass review, risk erosion, alarm figures) on the read standby when
 * there is one and it answers, else on the primary. `read` gets the dependencies with `db` pointing at the chosen
 * server; it must only read. Everything else (sessions, users, caches and their change feed) stays on the primary.
 */
export async function onReadStandby<T>(deps: AppDeps, read: (d: AppDeps) => Promise<T>): Promise<T> {
  const standby = deps.readStandby
  if (!standby || standbyState(deps) === 'down') return read(deps)
  try {
    return await read({ ...deps, db: standby.db })
  } catch (err) {
    const code = errorField(err, 'code')
    if (isConnectionError(err)) {
      standby.downUntil = deps.clock.now().getTime() + STANDBY_RETRY_MS
      logger
        .child({ component: 'db' })
        .warn({ message: errorField(err, 'message') }, 'read standby unreachable; heavy reads go to the primary')
    } else if (code !== RECOVERY_CONFLICT) throw err
    return read(deps)
  }
}
