import type pg from 'pg'
import type { Clock } from './clock.ts'
import type { Config } from './config.ts'
import type { Db } from './db/index.ts'
import type { ReadStandby } from './db/read-standby.ts'

/** What the app factory needs; tests pass their own database and clock. */
export interface AppDeps {
  db: Db
  pool: pg.Pool
  clock: Clock
  config: Config
  /** The hot standby for heavy reads (READ_DATABASE_URL), if any: used only through onReadStandby. */
  readStandby?: ReadStandby
}
