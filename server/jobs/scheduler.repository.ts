import type { Db } from '../db/index.ts'

/** Inserts the job's row, or updates its interval. */
export async function registerJob(db: Db, name: string, intervalSec: number, now: Date): Promise<void> {
  await db
    .insertInto('job_schedule')
    .values({ name, interval_sec: intervalSec, next_run_at: now })
    .onConflict((oc) => oc.column('name').doUpdateSet({ interval_sec: intervalSec }))
    .execute()
}

/** Takes the lease of a due job whose lease is empty or past; true when this owner got it. */
export async function claimJob(db: Db, name: string, owner: string, now: Date, leaseMs: number): Promise<boolean> {
  const row = await db
    .updateTable('job_schedule')
    .set({ locked_until: new Date(now.getTime() + leaseMs), lease_owner: owner })
    .where('name', '=', name)
    .where('next_run_at', '<=', now)
    .where((eb) => eb.or([eb('locked_until', 'is', null), eb('locked_until', '<', now)]))
    .returning('name')
    .executeTakeFirst()
  return Boolean(row)
}

/** Extends a lease this owner still holds. */
export async function renewLease(db: Db, name: string, owner: string, now: Date, leaseMs: number): Promise<void> {
  await db
    .updateTable('job_schedule')
    .set({ locked_until: new Date(now.getTime() + leaseMs) })
    .where('name', '=', name)
    .where('lease_owner', '=', owner)
    .execute()
}

/** Records the run and releases the lease, unless another instance has taken the job over meanwhile. */
export async function finishJob(
  db: Db,
  name: string,
  owner: string,
  run: { lastRunAt: Date; lastError: string | null; nextRunAt: Date },
): Promise<void> {
  await db
    .updateTable('job_schedule')
    .set({
      locked_until: null,
      lease_owner: null,
      last_run_at: run.lastRunAt,
      last_error: run.lastError,
      next_run_at: run.nextRunAt,
    })
    .where('name', '=', name)
    .where('lease_owner', '=', owner)
    .execute()
}
