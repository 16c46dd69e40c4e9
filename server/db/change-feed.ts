import {
  AliasNode,
  TableNode,
  type KyselyPlugin,
  type OperationNode,
  type PluginTransformQueryArgs,
  type PluginTransformResultArgs,
  type QueryResult,
  type RootOperationNode,
  type UnknownRow,
} from 'kysely'
import pg from 'pg'

/** Channel of the change notifications (triggers of migration 2026_12_03_060000). */
export const CHANGE_CHANNEL = 'limitkeeper_change'

/** What changed: 'user:<id>', 'session:<sid>', 'register', or '*' (anything: caches must drop everything). */
export type ChangeListener = (change: string) => void

/** Tables whose writes are announced, and the change each one means for the caches. */
const WATCHED: Record<string, string> = {
  app_user: 'user:*',
  role_assignment: 'user:*',
  session: 'session:*',
  limit_function: 'register',
  limit_instrument: 'register',
  instrument: 'register',
  process: 'register',
  area: 'register',
  site: 'register',
}
const RAW_WRITE = new RegExp(
  `\\b(?:insert\\s+into|update|delete\\s+from|truncate)\\s+(${Object.keys(WATCHED).join('|')})\\b`,
  'gi',
)

/**
 * Tells the app's caches what changed, from this process at once and from every other app instance through
 * PostgreSQL LISTEN/NOTIFY (docs/architecture.md, "Caches and change notifications"). A cache may serve only while
 * `live` is true: while the listening connection is down nothing would tell it about other instances' changes.
 */
export class ChangeFeed {
  private readonly listeners = new Set<ChangeListener>()
  private client: pg.Client | null = null
  private connecting: Promise<void> | null = null
  private retry: NodeJS.Timeout | null = null
  private closed = false
  live = false

  constructor(private readonly connectionString: string) {}

  /** Starts listening (once) and calls `fn` for every change until the returned function is called. */
  subscribe(fn: ChangeListener): () => void {
    this.listeners.add(fn)
    void this.connect()
    return () => this.listeners.delete(fn)
  }

  /** A change made by this process (seen by the query plugin), announced before other instances hear of it. */
  emit(change: string): void {
    for (const fn of this.listeners) fn(change)
  }

  private connect(): Promise<void> {
    if (this.closed || this.client || this.connecting) return this.connecting ?? Promise.resolve()
    const client = new pg.Client({ connectionString: this.connectionString })
    const down = () => {
      if (this.client !== client) return
      this.client = null
      this.live = false
      this.emit('*')
      client.end().catch(() => {})
      if (!this.closed) {
        this.retry = setTimeout(() => void this.connect(), 1000)
        this.retry.unref()
      }
    }
    client.on('notification', (msg) => {
      if (msg.channel === CHANGE_CHANNEL) this.emit(msg.payload ?? '*')
    })
    client.on('error', down)
    client.on('end', down)
    this.connecting = (async () => {
      try {
        await client.connect()
        await client.query(`LISTEN ${CHANGE_CHANNEL}`)
        if (this.closed) {
          await client.end()
          return
        }
        this.client = client
        // whatever was cached before the connection was up may have missed a change
        this.emit('*')
        this.live = true
      } catch {
        client.end().catch(() => {})
        if (!this.closed) {
          this.retry = setTimeout(() => void this.connect(), 1000)
          this.retry.unref()
        }
      } finally {
        this.connecting = null
      }
    })()
    return this.connecting
  }

  /** Waits until the feed listens (for tests and the benchmark); false when it could not connect in time. */
  async ready(timeoutMs = 5000): Promise<boolean> {
    const end = Date.now() + timeoutMs
    while (!this.live && Date.now() < end) {
      await this.connect()
      if (!this.live) await new Promise((r) => setTimeout(r, 20))
    }
    return this.live
  }

  async close(): Promise<void> {
    this.closed = true
    this.live = false
    if (this.retry) clearTimeout(this.retry)
    await this.connecting
    const c = this.client
    this.client = null
    if (c) await c.end().catch(() => {})
    this.listeners.clear()
  }

  /** A Kysely plugin that announces this process's writes to watched tables as they are sent. */
  plugin(): KyselyPlugin {
    const emit = (change: string) => this.emit(change)
    return {
      transformQuery(args: PluginTransformQueryArgs): RootOperationNode {
        for (const change of changesOf(args.node)) emit(change)
        return args.node
      },
      async transformResult(args: PluginTransformResultArgs): Promise<QueryResult<UnknownRow>> {
        return args.result
      },
    }
  }
}

function tableName(node: OperationNode | undefined): string | undefined {
  if (!node) return undefined
  if (TableNode.is(node)) return node.table.identifier.name
  if (AliasNode.is(node)) return tableName(node.node)
  return undefined
}

function changesOf(node: RootOperationNode): string[] {
  const tables: (string | undefined)[] = []
  if (node.kind === 'InsertQueryNode') tables.push(tableName(node.into))
  else if (node.kind === 'UpdateQueryNode') tables.push(tableName(node.table))
  else if (node.kind === 'DeleteQueryNode') tables.push(...node.from.froms.map(tableName))
  else if (node.kind === 'RawNode') {
    for (const m of node.sqlFragments.join(' ').matchAll(RAW_WRITE)) tables.push(m[1].toLowerCase())
  }
  return [...new Set(tables.map((t) => (t ? WATCHED[t] : undefined)).filter((c): c is string => !!c))]
}

/**
 * A per-process cache of values loaded from PostgreSQL, dropped by the change feed: `load` runs on a miss, and a
 * value loaded while a change arrived is not kept (it may predate the change). `ttlMs` bounds the age of any value.
 */
export class ChangeCache<V> {
  private readonly map = new Map<string, { value: V; until: number }>()
  private generation = 0

  constructor(
    private readonly feed: ChangeFeed | undefined,
    private readonly ttlMs: number,
    private readonly max = 10_000,
  ) {}

  /** Drops one key, or every key when `key` is undefined. */
  drop(key?: string): void {
    this.generation++
    if (key === undefined) this.map.clear()
    else this.map.delete(key)
  }

  get(key: string): V | undefined {
    if (!this.feed?.live) return undefined
    const hit = this.map.get(key)
    if (!hit) return undefined
    if (hit.until < Date.now()) {
      this.map.delete(key)
      return undefined
    }
    return hit.value
  }

  /** Keeps `value` unless a change arrived since `generationAtLoad` (taken with `mark()` before loading). */
  set(key: string, value: V, generationAtLoad: number, ttlMs = this.ttlMs): void {
    if (!this.feed?.live || generationAtLoad !== this.generation || ttlMs <= 0) return
    if (this.map.size >= this.max) this.map.clear()
    this.map.set(key, { value, until: Date.now() + ttlMs })
  }

  mark(): number {
    return this.generation
  }

  async getOrLoad(key: string, load: () => Promise<V>): Promise<V> {
    const hit = this.get(key)
    if (hit !== undefined) return hit
    const gen = this.mark()
    const value = await load()
    this.set(key, value, gen)
    return value
  }
}

const feeds = new WeakMap<object, ChangeFeed>()

/** Registers the feed of a pool (server/db/index.ts), so the app finds it from its dependencies. */
export function registerChangeFeed(pool: object, feed: ChangeFeed): void {
  feeds.set(pool, feed)
}

/** The change feed of a pool made by createDb; undefined for other pools (the caches then never serve). */
export function changeFeedOf(pool: object): ChangeFeed | undefined {
  return feeds.get(pool)
}
