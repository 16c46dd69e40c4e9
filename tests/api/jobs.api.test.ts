import { describe, expect, it } from 'vitest'
import { AdjustableClock, type DueJob } from '../../server/clock.ts'
import { createDb, type Db } from '../../server/db/index.ts'
import { JobScheduler, LEASE_MS } from '../../server/jobs/scheduler.ts'
import { useTestDb } from './helpers/test-db.ts'
import { until } from './helpers/wait.ts'

const ctx = useTestDb({ seed: false })

/** A clock that stands still until the test moves it, so "due" edges are exact to the millisecond. */
function standingClock(at: string) {
  const base = new Date(at)
  return new AdjustableClock({ now: () => base })
}

/** A job that records the `now` of each run (and who ran it). */
function recordingJob(
  name: string,
  intervalSec: number,
  runs: { now: string; by: string }[],
  by: string,
  fail = false,
): DueJob<void> {
  return {
    name,
    intervalSec,
    async runDue(now) {
      runs.push({ now: now.toISOString(), by })
      if (fail) throw new Error('the relay is unreachable')
    },
  }
}

const schedule = (name: string) =>
  ctx.db.selectFrom('job_schedule').selectAll().where('name', '=', name).executeTakeFirstOrThrow()

describe('JobScheduler', () => {
  it('runs a job once per interval, on the injected clock', async () => {
    const clock = standingClock('2030-05-01T00:00:00.000Z')
    const runs: { now: string; by: string }[] = []
    const s = new JobScheduler(ctx.db, clock, [recordingJob('test.every-minute', 60, runs, 'a')])
    await s.register()

    await s.tick()
    await s.tick() // same instant: not due again
    expect(runs.map((r) => r.now)).toEqual(['2030-05-01T00:00:00.000Z'])
    expect(await schedule('test.every-minute')).toMatchObject({
      interval_sec: 60,
      locked_until: null,
      last_error: null,
      last_run_at: new Date('2030-05-01T00:00:00.000Z'),
      next_run_at: new Date('2030-05-01T00:01:00.000Z'),
    })

    clock.advance(59_999)
    await s.tick()
    expect(runs).toHaveLength(1)
    clock.advance(1)
    await s.tick()
    await s.tick()
    expect(runs.map((r) => r.now)).toEqual(['2030-05-01T00:00:00.000Z', '2030-05-01T00:01:00.000Z'])

    // a long gap runs the job once, not once per missed interval
    clock.advance(10 * 60_000)
    await s.tick()
    await s.tick()
    expect(runs.map((r) => r.now)).toEqual([
      '2030-05-01T00:00:00.000Z',
      '2030-05-01T00:01:00.000Z',
      '2030-05-01T00:11:00.000Z',
    ])
  })

  it('records a failure and runs the job again at the next interval', async () => {
    const clock = standingClock('2030-06-01T00:00:00.000Z')
    const runs: { now: string; by: string }[] = []
    const log: string[] = []
    const s = new JobScheduler(ctx.db, clock, [recordingJob('test.failing', 300, runs, 'a', true)], (m) => log.push(m))
    await s.register()
    await s.tick()
    expect(runs).toHaveLength(1)
    expect(log).toEqual(['job test.failing failed: the relay is unreachable'])
    expect(await schedule('test.failing')).toMatchObject({
      locked_until: null,
      last_error: 'the relay is unreachable',
      next_run_at: new Date('2030-06-01T00:05:00.000Z'),
    })
    clock.advance(300_000)
    await s.tick()
    expect(runs).toHaveLength(2)
  })

  // several app servers share one database (docs/deployment.md): a due run happens on one of them only
  it('runs a due job exactly once when several schedulers on the same database tick at the same time', async () => {
    const clock = standingClock('2030-07-01T00:00:00.000Z')
    const runs: { now: string; by: string }[] = []
    const instances: { db: Db; scheduler: JobScheduler }[] = []
    for (const by of ['a', 'b', 'c', 'd']) {
      const { db } = createDb(ctx.database.appUrl, 2) // each "app server" with its own pool
      instances.push({ db, scheduler: new JobScheduler(db, clock, [recordingJob('test.shared', 60, runs, by)]) })
    }
    try {
      await Promise.all(instances.map((i) => i.scheduler.register()))
      const rounds = 10
      for (let round = 0; round < rounds; round++) {
        await Promise.all(instances.map((i) => i.scheduler.tick()))
        expect(runs).toHaveLength(round + 1)
        clock.advance(60_000)
      }
      // one run per interval, each at its own instant
      expect(new Set(runs.map((r) => r.now)).size).toBe(rounds)
      expect(await schedule('test.shared')).toMatchObject({
        locked_until: null,
        next_run_at: new Date('2030-07-01T00:10:00.000Z'),
      })
    } finally {
      await Promise.all(instances.map((i) => i.db.destroy()))
    }
  })

  it('does not start a job another instance holds, until that lease runs out', async () => {
    const clock = standingClock('2030-08-01T00:00:00.000Z')
    const runs: { now: string; by: string }[] = []
    let release!: () => void
    const gate = new Promise<void>((resolve) => {
      release = resolve
    })
    let started!: () => void
    const isRunning = new Promise<void>((resolve) => {
      started = resolve
    })
    const slow: DueJob<void> = {
      name: 'test.slow',
      intervalSec: 60,
      async runDue(now) {
        runs.push({ now: now.toISOString(), by: 'a' })
        started()
        await gate
      },
    }
    const a = new JobScheduler(ctx.db, clock, [slow])
    const b = new JobScheduler(ctx.db, clock, [recordingJob('test.slow', 60, runs, 'b')])
    await a.register()
    const first = a.tick()
    await isRunning
    clock.advance(20_000) // due again by the schedule, but a still holds the (30 s) lease
    await b.tick()
    expect(runs.map((r) => r.by)).toEqual(['a'])
    release()
    await first
    clock.advance(60_000)
    await b.tick()
    expect(runs.map((r) => r.by)).toEqual(['a', 'b'])

    // a lease left behind with a long expiry (as written by an older version) is still honoured until it ends
    const now = clock.now()
    await ctx.db
      .updateTable('job_schedule')
      .set({ locked_until: new Date(now.getTime() + 10 * 60_000), next_run_at: now })
      .where('name', '=', 'test.slow')
      .execute()
    await b.tick()
    expect(runs).toHaveLength(2)
    clock.advance(10 * 60_000 + 1)
    await b.tick()
    expect(runs.map((r) => r.by)).toEqual(['a', 'b', 'b'])
  })

  // a crashed instance must not hold a job for long: the lease is short, and renewed only while the job runs
  it('lets another instance take over within the 30 s lease when the holder dies, and renews a running lease', async () => {
    const clock = standingClock('2030-09-01T00:00:00.000Z')
    const runs: string[] = []
    const hung: DueJob<void> = {
      name: 'test.crash',
      intervalSec: 600,
      async runDue() {
        runs.push('a')
        await new Promise(() => {}) // never ends: the instance "dies" mid-run
      },
    }
    const aDb = createDb(ctx.database.appUrl, 2).db
    const a = new JobScheduler(aDb, clock, [hung], () => {})
    await a.register()
    void a.tick()
    await until('the first instance ran the job', async () => runs.length === 1, 20_000, 20)
    await aDb.destroy() // the dead instance renews nothing more
    const b = new JobScheduler(ctx.db, clock, [
      { name: 'test.crash', intervalSec: 600, runDue: async () => void runs.push('b') },
    ])
    clock.advance(LEASE_MS - 1_000)
    await b.tick()
    expect(runs).toEqual(['a'])
    clock.advance(2_000)
    await b.tick()
    expect(runs).toEqual(['a', 'b'])

    // a live instance renews its lease while the job runs, so nobody else starts it
    let release!: () => void
    const gate = new Promise<void>((r) => (release = r))
    const c = new JobScheduler(
      ctx.db,
      clock,
      [{ name: 'test.renewed', intervalSec: 600, runDue: () => gate.then(() => void runs.push('c')) }],
      () => {},
      { leaseMs: LEASE_MS, renewMs: 20 },
    )
    await c.register()
    const running = c.tick()
    const started = clock.now().getTime()
    await until('the job leased', async () => (await schedule('test.renewed')).locked_until !== null, 20_000, 20)
    clock.advance(LEASE_MS + 5_000) // past the first lease: only a renewal keeps it
    await until(
      'the lease renewed',
      async () => ((await schedule('test.renewed')).locked_until?.getTime() ?? 0) > started + LEASE_MS + 5_000,
      20_000,
      20,
    )
    const d = new JobScheduler(ctx.db, clock, [
      { name: 'test.renewed', intervalSec: 600, runDue: async () => void runs.push('d') },
    ])
    await d.tick()
    release()
    await running
    expect(runs).toEqual(['a', 'b', 'c'])
    expect(await schedule('test.renewed')).toMatchObject({ locked_until: null, lease_owner: null })
  })
})
