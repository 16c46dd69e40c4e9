// Two app processes on one PostgreSQL database, as behind a load balancer (docs/deployment.md, "Several app
// instances"): sessions, sign-in throttling and the job schedule live in PostgreSQL, so either instance serves any
// request, each scheduled job runs once per due time, and when one instance dies in the middle of a job the other
// finishes it once the lease has run out.
import type { ChildProcess } from 'node:child_process'
import type { AddressInfo } from 'node:net'
import pg from 'pg'
import { SMTPServer } from 'smtp-server'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { exited, startServer } from './helpers/start-process.ts'
import { useTestDb } from './helpers/test-db.ts'
import { until } from './helpers/wait.ts'

const ctx = useTestDb()
const LEASE_SECONDS = 3

interface Instance {
  name: string
  child: ChildProcess
  url: string
  /** The JSON log lines the process wrote so far. */
  logs: Record<string, unknown>[]
}

/** `server/start.ts` against the test database (no local cluster, no migration, no seeding), JSON logs on stdout. */
async function startInstance(name: string, env: Record<string, string>): Promise<Instance> {
  const logs: Record<string, unknown>[] = []
  let pending = ''
  const onStdout = (text: string) => {
    pending += text
    const lines = pending.split('\n')
    pending = lines.pop() ?? ''
    for (const l of lines) if (l.startsWith('{')) logs.push(JSON.parse(l) as Record<string, unknown>)
  }
  const { child, url } = await startServer(
    {
      NODE_ENV: 'test',
      DATABASE_URL: ctx.database.appUrl,
      MIGRATION_DATABASE_URL: '',
      PORT: '0',
      LOG_LEVEL: 'info',
      LOG_FORMAT: 'json',
      JOB_POLL_SECONDS: '0.5',
      JOB_LEASE_SECONDS: String(LEASE_SECONDS),
      SIGNIN_MAX_FAILURES_PER_ACCOUNT: '3',
      // the name each database connection of this process carries (pg_stat_activity.application_name)
      PGAPPNAME: name,
      ...env,
    },
    { onStdout },
  )
  return { name, child, url, logs }
}

async function stopInstance(i: Instance): Promise<void> {
  const stopped = exited(i.child)
  i.child.kill('SIGTERM')
  await stopped
}

/** A browser-like client: one cookie jar, the CSRF token on every write, sent to whichever instance is named. */
class Client {
  cookie = ''
  csrf = ''
  async call(base: string, method: string, url: string, body?: unknown) {
    const res = await fetch(`${base}${url}`, {
      method,
      headers: {
        ...(this.cookie ? { cookie: this.cookie } : {}),
        ...(this.csrf ? { 'x-csrf-token': this.csrf } : {}),
        ...(body ? { 'content-type': 'application/json' } : {}),
      },
      body: body ? JSON.stringify(body) : undefined,
    })
    const set = res.headers.getSetCookie().map((c) => c.split(';')[0])
    if (set.length) this.cookie = set.join('; ')
    const text = await res.text()
    const json = text ? (JSON.parse(text) as Record<string, unknown>) : {}
    if (typeof json.csrfToken === 'string') this.csrf = json.csrfToken
    return { status: res.status, body: json }
  }
}

/** A mail relay that holds the first message's DATA unanswered (a delivery in progress) and accepts the rest. */
async function startStallingRelay() {
  const accepted: string[] = []
  let stalled = 0
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS'],
    logger: false,
    onData(stream, _session, cb) {
      let raw = ''
      stream.on('data', (c: Buffer) => (raw += c.toString()))
      stream.on('end', () => {
        if (stalled++ === 0) return // never answered: the sending instance waits in the middle of its job
        accepted.push(/^Subject: (.*)$/m.exec(raw)?.[1] ?? '')
        cb()
      })
    },
  })
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()))
  const port = (server.server.address() as AddressInfo).port
  return { port, accepted, stalledCount: () => stalled, close: () => new Promise<void>((r) => server.close(() => r())) }
}

const instances: Instance[] = []
let relay: Awaited<ReturnType<typeof startStallingRelay>>
let superClient: pg.Client

beforeAll(async () => {
  relay = await startStallingRelay()
  const env = { SMTP_PORT: String(relay.port) }
  instances.push(...(await Promise.all([startInstance('lk-a', env), startInstance('lk-b', env)])))
  superClient = new pg.Client({ connectionString: ctx.database.superUrl })
  await superClient.connect()
}, 120_000)

afterAll(async () => {
  await Promise.all(instances.map(stopInstance))
  await superClient?.end()
  await relay?.close()
})

describe('two app instances on one database', () => {
  it('a session made on one instance works on the other, and signing out on the other ends it on both', async () => {
    const [a, b] = instances
    const c = new Client()
    await c.call(a.url, 'GET', '/api/session')
    const signIn = await c.call(a.url, 'POST', '/api/session', {
      email: 'engineer@fernhollow.example',
      password: DEMO_PASSWORD,
    })
    expect(signIn.status).toBe(201)
    const onB = await c.call(b.url, 'GET', '/api/session')
    expect(onB.body.user).toMatchObject({ email: 'engineer@fernhollow.example' })
    expect((await c.call(b.url, 'GET', '/api/limits?limit=1')).status).toBe(200)

    const signedInCookie = c.cookie
    expect((await c.call(b.url, 'DELETE', '/api/session')).status).toBe(204)
    // the same cookie, sent again to the first instance: its session is gone from the shared store
    c.cookie = signedInCookie
    const again = await c.call(a.url, 'GET', '/api/session')
    expect(again.body.user).toBeNull()
  })

  it('sign-in throttling counts the failures of both instances together', async () => {
    const [a, b] = instances
    const email = 'technician@fernhollow.example'
    const c = new Client()
    await c.call(a.url, 'GET', '/api/session')
    // three wrong passwords (the limit set for this file), spread over both instances
    for (const base of [a.url, b.url, a.url])
      expect((await c.call(base, 'POST', '/api/session', { email, password: 'not-the-password' })).status).toBe(401)
    // the right password is now refused on either instance: the count is one, in PostgreSQL
    expect((await c.call(b.url, 'POST', '/api/session', { email, password: DEMO_PASSWORD })).status).toBe(429)
    expect((await c.call(a.url, 'POST', '/api/session', { email, password: DEMO_PASSWORD })).status).toBe(429)
  })

  it('runs each scheduled job once per due time, whichever instance claims it', async () => {
    // the audit sealer runs every second and logs its runs at debug level: the chain's gap-free positions show it
    // sealed once at a time (tests/api/audit.api.test.ts)
    const jobs = await ctx.db
      .selectFrom('job_schedule')
      .select(['name', 'interval_sec'])
      .where('name', '<>', 'audit.seal')
      .execute()
    expect(jobs.length).toBeGreaterThanOrEqual(6)
    // both clocks a day ahead: every job is due at once on both instances
    const ahead = new Date(Date.now() + 24 * 3600_000).toISOString()
    const c = new Client()
    await c.call(instances[0].url, 'GET', '/api/session')
    for (const i of instances) expect((await c.call(i.url, 'POST', '/api/test/clock', { now: ahead })).status).toBe(200)
    await until(
      'every job ran after the jump',
      async () => {
        const runs = instances.flatMap((i) => i.logs).filter((l) => l.msg === 'job run' && String(l.dueAt) >= ahead)
        return jobs.every((j) => runs.some((r) => r.job === j.name)) && runs
      },
      90_000,
    )
    const runs = instances.flatMap((i) =>
      i.logs
        .filter((l) => l.msg === 'job run')
        .map((l) => ({ job: String(l.job), dueAt: String(l.dueAt), by: i.name })),
    )
    for (const j of jobs) {
      const due = runs
        .filter((r) => r.job === j.name)
        .map((r) => Date.parse(r.dueAt))
        .sort((x, y) => x - y)
      // a due time run twice would show as two runs a few milliseconds apart; the interval parts consecutive runs
      for (let k = 1; k < due.length; k++)
        expect(due[k] - due[k - 1], `${j.name} ran twice for one due time`).toBeGreaterThanOrEqual(
          j.interval_sec * 1000 - 1000,
        )
    }
    // both instances took part in the schedule
    expect(new Set(runs.map((r) => r.by)).size).toBe(2)
  }, 120_000)

  it('when the instance sending a mail dies mid-delivery, the other delivers it once after the lease', async () => {
    const subject = `Instances test ${Date.now()}`
    await ctx.db
      .insertInto('mail_outbox')
      .values({
        to_addr: 'supervisor@fernhollow.example',
        subject,
        text_body: 'A message in the outbox while two instances run.',
        created_at: new Date(),
        next_attempt_at: new Date(),
      })
      .execute()
    // one instance holds the message (its row locked in an open transaction) while the relay withholds its answer
    await until('a delivery in progress', async () => relay.stalledCount() === 1)
    const holder = await until('the instance holding the message', async () => {
      const { rows } = await superClient.query<{ application_name: string }>(
        `SELECT application_name FROM pg_stat_activity
          WHERE datname = $1 AND state = 'idle in transaction' AND query ILIKE '%mail_outbox%'`,
        [ctx.database.name],
      )
      return rows[0]?.application_name
    })
    const dying = instances.find((i) => i.name === holder)!
    const survivor = instances.find((i) => i.name !== holder)!
    const lease = await ctx.db
      .selectFrom('job_schedule')
      .select(['lease_owner', 'locked_until'])
      .where('name', '=', 'mail.deliver')
      .executeTakeFirstOrThrow()
    expect(lease.lease_owner).not.toBeNull()

    const killedAt = Date.now()
    dying.child.kill('SIGKILL')
    await until('the survivor delivered the message', async () => relay.accepted.includes(subject), 30_000)
    const tookMs = Date.now() - killedAt
    // the relay's answer comes before the survivor commits the delivery: wait for the row to say so
    const row = await until('the delivery recorded', async () => {
      const r = await ctx.db
        .selectFrom('mail_outbox')
        .select(['sent_at', 'attempts'])
        .where('subject', '=', subject)
        .executeTakeFirstOrThrow()
      return r.sent_at === null ? undefined : r
    })
    // delivered once: the withheld first attempt died with its transaction, the survivor's attempt is the only one
    expect(relay.accepted.filter((s) => s === subject)).toHaveLength(1)
    expect(row.attempts).toBe(1)
    expect(survivor.logs.some((l) => l.msg === 'mail delivered')).toBe(true)
    // taken over after the lease (renewed every third of it), not before and not much later
    expect(tookMs).toBeLessThan((LEASE_SECONDS + 10) * 1000)
  }, 60_000)
})
