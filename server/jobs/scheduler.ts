import { randomUUID } from 'node:crypto'
import type { Clock, DueJob } from '../clock.ts'
import type { Db } from '../db/index.ts'
import { logger } from '../logger.ts'
import * as repo from './scheduler.repository.ts'

/** A lease lasts this long unless renewed; a crashed instance holds a job at most this long. */
export const LEASE_MS = 30_000
/** A running job renews its lease this often. */
export const RENEW_MS = 10_000

/**
 * Runs each job's runDue(now) on its interval. The schedule lives in PostgreSQL (table job_schedule): an instance
 * claims a due job with a conditional UPDATE (a short lease in locked_until, renewed while the job runs), so with
 * several app servers each run happens once, and another instance takes over within LEASE_MS when one dies.
 * See docs/adr/0002-job-schedule-in-postgresql.md.
 */
export class JobScheduler {
  private timer: NodeJS.Timeout | null = null
  private running: Promise<void> | null = null
  private readonly abort = new AbortController()
  /** This instance's name on the leases it holds. */
  readonly owner = randomUUID()

  constructor(
    private readonly db: Db,
    private readonly clock: Clock,
    private readonly jobs: DueJob[],
    private readonly log: (msg: string) => void = (m) => logger.error({ component: 'jobs' }, m),
    private readonly lease = { leaseMs: LEASE_MS, renewMs: RENEW_MS },
  ) {}

  async register(): Promise<void> {
    for (const job of this.jobs) await repo.registerJob(this.db, job.name, job.intervalSec, this.clock.now())
  }

  /** One pass: run every job that is due now and not leased by another instance. */
  async tick(): Promise<void> {
    for (const job of this.jobs) {
      if (this.abort.signal.aborted) return
      const now = this.clock.now()
      const claimed = await repo.claimJob(this.db, job.name, this.owner, now, this.lease.leaseMs)
      if (!claimed) continue
      // renew the lease while the job runs, so a long run keeps it and a crashed instance loses it quickly
      const renew = setInterval(() => {
        repo
          .renewLease(this.db, job.name, this.owner, this.clock.now(), this.lease.leaseMs)
          .catch((err) => this.log(`job ${job.name}: lease not renewed: ${err instanceof Error ? err.message : err}`))
      }, this.lease.renewMs)
      renew.unref()
      let lastError: string | null = null
      const t0 = Date.now()
      let result: unknown
      try {
        result = await job.runDue(now, this.abort.signal)
      } catch (err) {
        lastError = err instanceof Error ? err.message : String(err)
        this.log(`job ${job.name} failed: ${lastError}`)
      } finally {
        clearInterval(renew)
      }
      logger[job.quiet && !lastError ? 'debug' : 'info'](
        {
          component: 'jobs',
          job: job.name,
          dueAt: now.toISOString(),
          ms: Date.now() - t0,
          ok: !lastError,
          result: result ?? undefined,
        },
        'job run',
      )
      await repo.finishJob(this.db, job.name, this.owner, {
        lastRunAt: now,
        lastError,
        nextRunAt: new Date(this.clock.now().getTime() + job.intervalSec * 1000),
      })
    }
  }

  start(pollSeconds: number): void {
    const loop = () => {
      this.running = this.tick()
        .catch((err) => this.log(`scheduler: ${err instanceof Error ? err.message : err}`))
        .finally(() => {
          this.running = null
          if (this.timer) this.timer = setTimeout(loop, pollSeconds * 1000)
        })
    }
    this.timer = setTimeout(loop, 100)
  }

  /** Stops taking new work at once (running jobs see their signal abort) and waits for the running pass to end. */
  async stop(): Promise<void> {
    this.abort.abort()
    if (this.timer) clearTimeout(this.timer)
    this.timer = null
    await this.running
  }
}
