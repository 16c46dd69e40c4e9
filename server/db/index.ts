import { Kysely, PostgresDialect } from 'kysely'
import pg from 'pg'
import { ChangeFeed, registerChangeFeed } from './change-feed.ts'
import type { Database } from './schema.ts'

// bigint (ids, count(*)) as JS numbers: every value we keep in bigint stays far below 2^53.
pg.types.setTypeParser(pg.types.builtins.INT8, (v) => Number(v))
// calendar dates stay 'YYYY-MM-DD' strings (a JS Date would shift them by the server's time zone)
pg.types.setTypeParser(pg.types.builtins.DATE, (v) => v)

export type Db = Kysely<Database>

/**
 * One pool shared by Kysely and the session store, and the pool's change feed (server/db/change-feed.ts): it
 * listens only once a cache subscribes, and ends with the pool.
 */
export function createDb(connectionString: string, max = 10): { db: Db; pool: pg.Pool } {
  const pool = new pg.Pool({ connectionString, max })
  const feed = new ChangeFeed(connectionString)
  registerChangeFeed(pool, feed)
  const end = pool.end.bind(pool)
  pool.end = (async () => {
    await feed.close()
    return end()
  }) as typeof pool.end
  const db = new Kysely<Database>({ dialect: new PostgresDialect({ pool }), plugins: [feed.plugin()] })
  return { db, pool }
}
