import connectPgSimple from 'connect-pg-simple'
import session from 'express-session'
import type pg from 'pg'
import type { Config } from '../config.ts'
import { ChangeCache, changeFeedOf } from '../db/change-feed.ts'

const SESSION_CACHE_MS = 60_000

/**
 * The PostgreSQL session store with a per-process cache of what it read: a session is read from the table once and
 * then served from memory until it changes here, another instance announces a change (docs/architecture.md,
 * "Caches and change notifications"), its cookie expires, or a minute passes.
 */
class CachedStore extends session.Store {
  private readonly cache: ChangeCache<{ json: string; expires: number }>

  constructor(
    private readonly store: session.Store,
    pool: pg.Pool,
  ) {
    super()
    const feed = changeFeedOf(pool)
    this.cache = new ChangeCache(feed, SESSION_CACHE_MS)
    feed?.subscribe((change) => {
      if (change === '*' || change === 'session:*') this.cache.drop()
      else if (change.startsWith('session:')) this.cache.drop(change.slice('session:'.length))
    })
  }

  get(sid: string, fn: (err: unknown, s?: session.SessionData | null) => void): void {
    const hit = this.cache.get(sid)
    if (hit && hit.expires > Date.now()) return fn(null, JSON.parse(hit.json) as session.SessionData)
    const gen = this.cache.mark()
    this.store.get(sid, (err, s) => {
      if (!err && s) {
        const expires = s.cookie?.expires ? new Date(s.cookie.expires).getTime() : Date.now() + SESSION_CACHE_MS
        this.cache.set(sid, { json: JSON.stringify(s), expires }, gen, Math.min(SESSION_CACHE_MS, expires - Date.now()))
      }
      fn(err, s)
    })
  }

  set(sid: string, s: session.SessionData, fn?: (err?: unknown) => void): void {
    this.cache.drop(sid)
    this.store.set(sid, s, (err) => fn?.(err))
  }

  destroy(sid: string, fn?: (err?: unknown) => void): void {
    this.cache.drop(sid)
    this.store.destroy(sid, (err) => fn?.(err))
  }

  touch(sid: string, s: session.SessionData, fn?: () => void): void {
    if (this.store.touch) this.store.touch(sid, s, () => fn?.())
    else fn?.()
  }
}

/** express-session stored in PostgreSQL (table `session`, created by a migration). */
export function createSessionMiddleware(config: Config, pool: pg.Pool) {
  const PgStore = connectPgSimple(session)
  return session({
    name: 'limitkeeper.sid',
    secret: config.SESSION_SECRET,
    store: new CachedStore(
      new PgStore({
        pool,
        tableName: 'session',
        createTableIfMissing: false,
        disableTouch: true,
        pruneSessionInterval: config.NODE_ENV === 'test' ? false : 600,
      }),
      pool,
    ),
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
