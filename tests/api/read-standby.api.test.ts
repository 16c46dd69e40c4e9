// READ_DATABASE_URL (docs/deployment.md, "A read standby"): a hot standby of the test cluster made with pg_basebackup
// and streaming replication on loopback. The heavy reads go there, writes never do, and the app falls back to the
// primary when the standby is down.
import { execFile } from 'node:child_process'
import { mkdtemp, rm } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import pg from 'pg'
import { afterAll, beforeAll, describe, expect, it, inject } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createReadStandby, type ReadStandby } from '../../server/db/read-standby.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { buildHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { until } from './helpers/wait.ts'
import { freePort } from '../../server/dev/free-port.ts'

const run = promisify(execFile)
const ctx = useTestDb()

let dir = ''
let env: NodeJS.ProcessEnv = {}
let standby: ReadStandby
let standbySuper: pg.Client
let eng: ApiAgent
let manager: ApiAgent

beforeAll(async () => {
  dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-standby-'))
  await run('chmod', ['755', dir])
  const primary = new URL(inject('superUrl'))
  env = {
    ...process.env,
    PG_DIR: path.join(dir, 'pg'),
    PGPORT: String(await freePort()),
    PRIMARY_PORT: primary.port,
    PG_FAST: '1',
  }
  // taken after this file's database was cloned, so the standby holds it
  const { stdout } = await run('bash', ['server/db/pg.sh', 'standby'], { env })
  const url = new URL(/READ_DATABASE_URL=(.*)/.exec(stdout)![1])
  url.pathname = `/${ctx.database.name}`
  standby = createReadStandby(url.toString(), 4)
  const superUrl = new URL(url)
  superUrl.username = 'postgres'
  superUrl.password = primary.password
  standbySuper = new pg.Client({ connectionString: superUrl.toString() })
  // the last test stops the standby under this connection: expected, not an error of the test
  standbySuper.on('error', () => {})
  await standbySuper.connect()
  const app = createApp({ ...ctx, readStandby: standby })
  eng = await signedIn(app, 'engineer')
  manager = await signedIn(app, 'manager')
}, 120_000)

afterAll(async () => {
  await standbySuper?.end().catch(() => {})
  await standby?.db.destroy()
  await run('bash', ['server/db/pg.sh', 'stop'], { env }).catch(() => {})
  if (dir) await rm(dir, { recursive: true, force: true })
})

const registerTags = async (q: string, view = 'full') =>
  (
    (await eng.get(`/api/limits?view=${view}&q=${encodeURIComponent(q)}`).expect(200)).body.items as { tag: string }[]
  ).map((l) => l.tag)

describe('a read standby (READ_DATABASE_URL)', () => {
  it('is in recovery: a hot standby of the test cluster', async () => {
    const { rows } = await standbySuper.query<{ r: boolean }>('SELECT pg_is_in_recovery() AS r')
    expect(rows[0].r).toBe(true)
    expect((await eng.get('/api/health').expect(200)).body.readStandby).toBe('up')
  })

  it('serves the register list while writes go to the primary', async () => {
    // replay paused: the standby keeps the state of this moment, the primary moves on
    await standbySuper.query('SELECT pg_wal_replay_pause()')
    // writes through the API while the standby cannot apply anything: they succeed, so none was sent there
    // (a read-only standby refuses every write with SQLSTATE 25006)
    const { limit } = await buildHeaterTrip(eng)
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.tag).toBe(limit.tag)
    // the register list comes from the standby, which has not seen the new limit
    expect(await registerTags(limit.tag)).toEqual([])
    // the register screen's page too, asked twice: a page read on the standby is not kept, so it cannot outlive the
    // change the primary announced before the standby replayed it
    expect(await registerTags(limit.tag, 'row')).toEqual([])
    expect(await registerTags(limit.tag, 'row')).toEqual([])
    // the plant manager's review and risk erosion are read there too, and answer
    await manager.get('/api/bypass-review/risk').expect(200)
    await standbySuper.query('SELECT pg_wal_replay_resume()')
    await until('the standby caught up', async () => (await registerTags(limit.tag)).includes(limit.tag))
    expect(await registerTags(limit.tag, 'row')).toEqual([limit.tag])
  })

  it('falls back to the primary when the standby is down, and says so on /api/health', async () => {
    await run('bash', ['server/db/pg.sh', 'stop'], { env })
    const { limit } = await buildHeaterTrip(eng)
    expect(await registerTags(limit.tag)).toEqual([limit.tag])
    expect((await eng.get('/api/health').expect(200)).body).toMatchObject({ database: 'ok', readStandby: 'down' })
  })
})
