import type { Clock, DueJob } from '../clock.ts'
import type { Db } from '../db/index.ts'

/**
 * Runs each job's runDue(now) on its interval. The schedule lives in PostgreSQL (table job_schedule): an instance
 * claims a due job with a conditional UPDATE (lease in locked_until), so with several app servers each run happens once.
 * See docs/adr/0002-job-schedule-in-postgresql.md.
 */
export class JobScheduler {
  private timer: NodeJS.Timeout | null = null
  private running: Promise<void> | null = null

  constructor(
    private readonly db: Db,
    private readonly clock: Clock,
    private readonly jobs: DueJob[],
    private readonly log: (msg: string) => void = () => {},
  ) {}

  async register(): Promise<void> {
    const now = this.clock.now()
    for (const job of this.jobs) {
      await this.db
        .insertInto('job_schedule')
        .values({ name: job.name, interval_sec: job.intervalSec, next_run_at: now })
        .onConflict((oc) => oc.column('name').doUpdateSet({ interval_sec: job.intervalSec }))
        .execute()
    }
  }

  /** One pass: run every job that is due now and not leased by another instance. */
  async tick(): Promise<void> {
    for (const job of this.jobs) {
      const now = this.clock.now()
      const claimed = await this.db
        .updateTable('job_schedule')
        .set({ locked_until: new Date(now.getTime() + 10 * 60_000) })
        .where('name', '=', job.name)
        .where('next_run_at', '<=', now)
        .where((eb) => eb.or([eb('locked_until', 'is', null), eb('locked_until', '<', now)]))
        .returning('name')
        .executeTakeFirst()
      if (!claimed) continue
      let lastError: string | null = null
      try {
        await job.runDue(now)
      } catch (err) {
        lastError = err instanceof Error ? err.message : String(err)
        this.log(`job ${job.name} failed: ${lastError}`)
      }
      const after = this.clock.now()
      await this.db
        .updateTable('job_schedule')
        .set({
          locked_until: null,
          last_run_at: now,
          last_error: lastError,
          next_run_at: new Date(after.getTime() + job.intervalSec * 1000),
        })
        .where('name', '=', job.name)
        .execute()
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

  async stop(): Promise<void> {
    if (this.timer) clearTimeout(this.timer)
    this.timer = null
    await this.running
  }
}
