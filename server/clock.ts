/** Where "now" comes from: services, jobs and the audit trail never call `new Date()` themselves. */
export interface Clock {
  now(): Date
}

export const systemClock: Clock = { now: () => new Date() }

/** A clock that follows the system clock from an offset; tests (NODE_ENV=test only) move it. */
export class AdjustableClock implements Clock {
  private offsetMs = 0
  constructor(private readonly base: Clock = systemClock) {}
  now(): Date {
    return new Date(this.base.now().getTime() + this.offsetMs)
  }
  /** Makes now() answer `t` at this instant; time then runs on from there. */
  set(t: Date | string): Date {
    this.offsetMs = new Date(t).getTime() - this.base.now().getTime()
    return this.now()
  }
  advance(ms: number): Date {
    this.offsetMs += ms
    return this.now()
  }
}

/** A job that does whatever is due at `now` (mail delivery, lapses, escalations, digests). */
export interface DueJob<R = unknown> {
  readonly name: string
  readonly intervalSec: number
  /** A job that runs every few seconds logs its runs at debug level only (failures are logged as always). */
  readonly quiet?: boolean
  /** `signal` aborts at shutdown: a job that loops stops taking new work when it fires and returns soon. */
  runDue(now: Date, signal?: AbortSignal): Promise<R>
}
