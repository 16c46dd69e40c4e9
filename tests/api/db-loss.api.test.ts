// PostgreSQL restarted under load, inside the test: the app answers 503 while the database is away (health says
// so), never crashes, recovers by itself without a restart, leaves nothing half-applied, and the audit chain stays
// intact. The cluster is this file's own (tests/pg-cluster.ts, as tests/global-setup.ts starts one),
// so restarting it disturbs no other test file.
import http from 'node:http'
import net from 'node:net'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { AdjustableClock } from '../../server/clock.ts'
import { loadConfig } from '../../server/config.ts'
import { createDb, type Db } from '../../server/db/index.ts'
import { verifyAuditChain } from '../../server/features/audit/audit.repository.ts'
import { DEMO_PASSWORD, seedDemo } from '../../server/seed/demo.ts'
import { migrateInChild, startThrowawayCluster, type ThrowawayCluster } from '../pg-cluster.ts'

let cluster: ThrowawayCluster | undefined
let db: Db
let server: http.Server
let base = ''
const pg = (cmd: 'start' | 'stop') => cluster!.pg(cmd)

beforeAll(async () => {
  cluster = await startThrowawayCluster('limitkeeper-dbloss-')
  await migrateInChild(cluster.ownerUrl)
  const owner = createDb(cluster.ownerUrl, 2).db
  await seedDemo(owner, new AdjustableClock(), { register: false })
  await owner.destroy()
  const config = loadConfig({ NODE_ENV: 'test', DATABASE_URL: cluster.appUrl, SMTP_PORT: '1' })
  const made = createDb(config.DATABASE_URL, 10)
  db = made.db
  const app = createApp({ db, pool: made.pool, clock: new AdjustableClock(), config }, { serveClient: false })
  server = http.createServer(app)
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve))
  base = `http://127.0.0.1:${(server.address() as net.AddressInfo).port}`
}, 120_000)

afterAll(async () => {
  if (server) {
    server.closeAllConnections()
    await new Promise((resolve) => server.close(resolve))
  }
  await db?.destroy()
  await cluster?.stop()
})

/** A signed-in engineer over real HTTP (cookie and CSRF token kept). */
async function engineer() {
  const agent = request.agent(base)
  const s = await agent.get('/api/session').expect(200)
  const res = await agent
    .post('/api/session')
    .set('X-CSRF-Token', s.body.csrfToken)
    .send({ email: 'engineer@fernhollow.example', password: DEMO_PASSWORD })
    .expect(201)
  return { agent, csrf: res.body.csrfToken as string }
}

async function waitFor(cond: () => Promise<boolean>, what: string, timeoutMs = 60_000) {
  const end = Date.now() + timeoutMs
  while (!(await cond())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 100))
  }
}

describe('PostgreSQL restarted under load', () => {
  it('answers 503 while it is away, recovers without a restart, and leaves nothing half-applied', async () => {
    // one after another: sign-in counts an attempt before the password is checked, so parallel sign-ins to one
    // account are held back like parallel guesses (docs/security.md, "Sign-in")
    const writers: Awaited<ReturnType<typeof engineer>>[] = []
    for (let i = 0; i < 6; i++) writers.push(await engineer())
    const area = await db.selectFrom('area').select('id').orderBy('id').executeTakeFirstOrThrow()
    const statuses = new Map<number, number>()
    const created: number[] = []
    let stop = false
    let n = 0
    const loops = writers.map(async (w) => {
      while (!stop) {
        const res = await w.agent
          .post('/api/processes')
          .set('X-CSRF-Token', w.csrf)
          .send({ areaId: area.id, name: `Load process ${++n}` })
          .catch(() => null)
        const status = res?.status ?? 0
        statuses.set(status, (statuses.get(status) ?? 0) + 1)
        if (status === 201) created.push(res!.body.id)
      }
    })
    // load first, then a fast shutdown of PostgreSQL in the middle of it
    await waitFor(async () => created.length >= 30, '30 writes before the restart')
    await pg('stop')
    // while it is away: health says so, reads and writes answer 503, nothing crashes
    const health = await fetch(`${base}/api/health`)
    expect(health.status).toBe(503)
    expect(await health.json()).toEqual({ status: 'degraded', database: 'unreachable' })
    const write = await writers[0].agent
      .post('/api/processes')
      .set('X-CSRF-Token', writers[0].csrf)
      .send({ areaId: area.id, name: 'While away' })
    expect(write.status).toBe(503)
    expect(write.body.error.code).toBe('SERVICE_UNAVAILABLE')
    const before = created.length
    await pg('start')
    // recovery by itself: the same app object, the same sessions
    await waitFor(async () => (await fetch(`${base}/api/health`)).status === 200, 'health back to 200')
    await waitFor(async () => created.length >= before + 30, '30 writes after the restart')
    stop = true
    await Promise.all(loops)

    // only 201 and 503 were answered: no 500, no connection dropped by a crashed process
    expect([...statuses.keys()].sort()).toEqual([201, 503])
    // nothing half-applied: every process row has its audit event and every event its row
    const rows = await db.selectFrom('process').select('id').where('name', 'like', 'Load process %').execute()
    const events = await db
      .selectFrom('audit_event')
      .select('entity_id')
      .where('action', '=', 'process.create')
      .execute()
    expect(new Set(events.map((e) => Number(e.entity_id)))).toEqual(new Set(rows.map((r) => r.id)))
    // every process answered 201 exists (a cut transaction can only be reported as failed, never as done)
    const ids = new Set(rows.map((r) => r.id))
    expect(created.every((id) => ids.has(id))).toBe(true)
    expect(await verifyAuditChain(db)).toMatchObject({ ok: true })
  }, 180_000)
})
