import connectPgSimple from 'connect-pg-simple'
import session from 'express-session'
import type pg from 'pg'
import type { Config } from '../config.ts'

/** express-session stored in PostgreSQL (table `session`, created by a migration). */
export function createSessionMiddleware(config: Config, pool: pg.Pool) {
  const PgStore = connectPgSimple(session)
  return session({
    name: 'limitkeeper.sid',
    secret: config.SESSION_SECRET,
    store: new PgStore({
      pool,
      tableName: 'session',
      createTableIfMissing: false,
      disableTouch: true,
      pruneSessionInterval: config.NODE_ENV === 'test' ? false : 600,
    }),
    resave: false,
    saveUninitialized: false,
    // the cookie is renewed when the session is saved (lastSeenAt moves at most once a minute); the idle and absolute
    // lifetimes themselves are enforced on the server's clock (middleware/current-user.ts)
    rolling: false,
    proxy: config.trustProxy !== false,
    cookie: {
      httpOnly: true,
      sameSite: 'lax',
      secure: config.COOKIE_SECURE,
      maxAge: config.SESSION_IDLE_MINUTES * 60_000,
    },
  })
}
