import { Kysely, PostgresDialect } from 'kysely'
import pg from 'pg'
import type { Database } from './schema.ts'

// bigint (ids, count(*)) as JS numbers: every value we keep in bigint stays far below 2^53.
pg.types.setTypeParser(pg.types.builtins.INT8, (v) => Number(v))
// calendar dates stay 'YYYY-MM-DD' strings (a JS Date would shift them by the server's time zone)
pg.types.setTypeParser(pg.types.builtins.DATE, (v) => v)

export type Db = Kysely<Database>

/** One pool shared by Kysely and the session store. */
export function createDb(connectionString: string, max = 10): { db: Db; pool: pg.Pool } {
  const pool = new pg.Pool({ connectionString, max })
  const db = new Kysely<Database>({ dialect: new PostgresDialect({ pool }) })
  return { db, pool }
}
