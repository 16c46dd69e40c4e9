import type { AddressInfo } from 'node:net'
import { AdjustableClock, type Clock, systemClock } from './clock.ts'
import type { Config } from './config.ts'
import { createApp } from './app.ts'
import { createDb } from './db/index.ts'
import { createReadStandby } from './db/read-standby.ts'
import { createJobs } from './jobs/index.ts'
import { JobScheduler } from './jobs/scheduler.ts'
import { loadAuditKeys } from './features/audit/audit.key.ts'
import { createAuditSealJob, SEAL_INTERVAL_SECONDS } from './features/audit/audit.sealer.ts'
import { logger } from './logger.ts'

export interface RunningServer {
  url: string
  port: number
  close(): Promise<void>
}

/** Connects to PostgreSQL as the runtime role, starts the job scheduler and listens. */
export async function startServer(
  config: Config,
  opts: { clock?: Clock; runJobs?: boolean } = {},
): Promise<RunningServer> {
  // the audit key must be there before anything is written: a missing AUDIT_KEY_FILE stops the start, not a request
  loadAuditKeys()
  const clock = opts.clock ?? (config.NODE_ENV === 'test' ? new AdjustableClock() : systemClock)
  const { db, pool } = createDb(config.DATABASE_URL, 20)
  const readStandby = config.READ_DATABASE_URL ? createReadStandby(config.READ_DATABASE_URL) : undefined
  const app = createApp({ db, pool, clock, config, readStandby })
  const leaseMs = config.JOB_LEASE_SECONDS * 1000
  const scheduler = new JobScheduler(
    db,
    clock,
    createJobs(db, config, clock),
    (m) => logger.error({ component: 'jobs' }, m),
    { leaseMs, renewMs: Math.round(leaseMs / 3) },
  )
  // the audit sealer runs every second on a scheduler of its own, so a long job never holds up the trail
  const sealer = new JobScheduler(
    db,
    clock,
    [createAuditSealJob(db, clock)],
    (m) => logger.error({ component: 'jobs' }, m),
    { leaseMs, renewMs: Math.round(leaseMs / 3) },
  )
  if (opts.runJobs !== false) {
    await scheduler.register()
    await sealer.register()
    scheduler.start(config.JOB_POLL_SECONDS)
    sealer.start(SEAL_INTERVAL_SECONDS)
  }
  const server = app.listen(config.PORT, config.HOST)
  await new Promise<void>((resolve, reject) => {
    server.once('listening', resolve)
    server.once('error', reject)
  }).catch(async (err: NodeJS.ErrnoException) => {
    await scheduler.stop()
    await sealer.stop()
    await db.destroy()
    await readStandby?.db.destroy()
    if (err.code === 'EADDRINUSE')
      throw new Error(`Port ${config.PORT} is already in use: stop what listens there or set PORT to a free port.`)
    throw err
  })
  const port = (server.address() as AddressInfo).port
  return {
    url: `http://${config.HOST}:${port}`,
    port,
    async close() {
      await scheduler.stop()
      await sealer.stop()
      server.closeAllConnections()
      await new Promise<void>((resolve) => server.close(() => resolve()))
      await db.destroy()
      await readStandby?.db.destroy()
    },
  }
}
