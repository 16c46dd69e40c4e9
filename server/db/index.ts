import { Kysely, PostgresDialect, sql } from 'kysely'
import pg from 'pg'
import { logger } from '../logger.ts'
import { ChangeFeed, registerChangeFeed } from './change-feed.ts'
import type { Database } from './schema.ts'

// bigint (ids, count(*)) as JS numbers: every value we keep in bigint stays far below 2^53.
pg.types.setTypeParser(pg.types.builtins.INT8, (v) => Number(v))
// calendar dates stay 'YYYY-MM-DD' strings (a JS Date would shift them by the server's time zone)
pg.types.setTypeParser(pg.types.builtins.DATE, (v) => v)

export type Db = Kysely<Database>

// SQLSTATE classes and codes meaning "the database is not reachable just now" (PostgreSQL manual, appendix A):
// 08 connection exception, 57P01..57P03 admin/crash shutdown and cannot connect now, 53300 too many connections.
const CONNECTION_CODES = new Set(['57P01', '57P02', '57P03', '53300', 'ECONNREFUSED', 'ECONNRESET', 'EPIPE'])
const CONNECTION_MESSAGES = [
  'Connection terminated',
  'connection terminated',
  'Client has encountered a connection error',
  'timeout exceeded when trying to connect',
  'Client was closed and is not queryable',
  'Cannot use a pool after calling end',
]

/** One round trip to the database (the health check); throws when it cannot be reached. */
export async function pingDatabase(db: Db): Promise<void> {
  await sql`SELECT 1`.execute(db)
}

/** True when an error means the database went away (the request may be retried later), not a bad query. */
export function isConnectionError(err: unknown): boolean {
  const code = errorField(err, 'code')
  if (CONNECTION_CODES.has(code) || code.startsWith('08')) return true
  const message = errorField(err, 'message')
  return CONNECTION_MESSAGES.some((m) => message.includes(m))
}

/** A text field of whatever was thrown (`code`: PostgreSQL's SQLSTATE or Node's code), '' when it has none. */
export function errorField(err: unknown, field: 'code' | 'message' | 'type'): string {
  if (!err || typeof err !== 'object') return ''
  const v: unknown = Reflect.get(err, field)
  return typeof v === 'string' ? v : ''
}

/**
 * One pool shared by Kysely and the session store, and the pool's change feed (server/db/change-feed.ts): it
 * listens only once a cache subscribes, and ends with the pool.
 * A connection PostgreSQL drops (restart, failover, network) must
 * never end the process: the pool and every client it makes get an 'error' listener, the broken client is discarded
 * and the next query opens a new one, so the app recovers by itself once the database is back
 * (docs/security.md, "Database loss").
 */
export function createDb(connectionString: string, max = 10): { db: Db; pool: pg.Pool } {
  // Idle connections stay five minutes (pg's default is ten seconds): a new connection costs the password key
  // derivation and session set-up, which a quiet page turn should not pay (docs/deployment.md, section 1).
  const pool = new pg.Pool({ connectionString, max, connectionTimeoutMillis: 5_000, idleTimeoutMillis: 300_000 })
  const log = logger.child({ component: 'db' })
  let lost = false
  const onError = (err: Error & { code?: string }) => {
    if (!lost) log.warn({ code: err.code, message: err.message }, 'database connection lost')
    lost = true
  }
  pool.on('error', onError)
  pool.on('connect', (client) => {
    client.on('error', onError)
    if (lost) {
      lost = false
      log.info('database connection re-established')
    }
  })
  const feed = new ChangeFeed(connectionString)
  registerChangeFeed(pool, feed)
  const end = pool.end.bind(pool)
  let ended: Promise<void> | null = null
  pool.end = (() =>
    (ended ??= (async () => {
      await feed.close()
      await end()
    })())) as typeof pool.end
  const db = new Kysely<Database>({ dialect: new PostgresDialect({ pool }), plugins: [feed.plugin()] })
  // Kysely ends the pool only once a query of its own set it up: ending the pool here too closes connections taken
  // from it directly (poolOf) when Kysely ran none (pool.end is made safe to call twice above)
  const destroy = db.destroy.bind(db)
  db.destroy = async () => {
    await destroy()
    await pool.end()
  }
  pools.set(db, pool)
  return { db, pool }
}

const pools = new WeakMap<Db, pg.Pool>()

/**
 * The pool under a Kysely instance made by createDb (undefined for others): for what Kysely cannot send, such as a
 * COPY stream (server/features/audit/audit.repository.ts, the chain walk).
 */
export function poolOf(db: Db): pg.Pool | undefined {
  return pools.get(db)
}

/** A Kysely instance over one checked-out connection, so COPY and Kysely statements share a transaction. */
export function kyselyOn(client: pg.PoolClient): Kysely<Database> {
  // a stand-in pool whose one connection forwards to the checked-out client (released by the caller, not Kysely)
  const connection = {
    query: (...args: unknown[]) => (client.query as (...a: unknown[]) => unknown)(...args),
    release() {},
  }
  const pool = { connect: async () => connection, end: async () => {} }
  return new Kysely<Database>({ dialect: new PostgresDialect({ pool: pool as unknown as pg.Pool }) })
}
