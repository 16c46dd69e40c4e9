import { ErrorCode } from '../../../shared/errors.ts'
import type { AppDeps } from '../../deps.ts'
import { AppError } from '../../errors.ts'
import * as repo from './session.repository.ts'

/**
 * Throttling of password guesses (sign-in, electronic signature, password change), following OWASP ASVS 4.0.3
 * §2.2.1: rate limiting with ever-increasing delays rather than a hard lock-out, so nobody can lock anyone out.
 * Three keys count failures within SIGNIN_WINDOW_MINUTES:
 * - the account at this address: SIGNIN_MAX_FAILURES_PER_ACCOUNT;
 * - the address, on any accounts: SIGNIN_MAX_FAILURES_PER_ADDRESS;
 * - the account from addresses it has never signed in from: SIGNIN_MAX_FAILURES_PER_ACCOUNT. A known address
 *   (a successful sign-in from it within 90 days) is not held back by guesses made elsewhere.
 * Once a key reaches its limit, each further attempt waits BASE_DELAY_MS × 2^(failures − limit), at most the
 * window. The attempt is counted before the password is checked, in one transaction holding the keys' rows
 * (docs/security.md, "Sign-in").
 */
export const BASE_DELAY_MS = 30_000
const KNOWN_ADDRESS_DAYS = 90

export interface Reservation {
  keys: string[]
  release(success: boolean): Promise<void>
}

export function delayMs(failures: number, limit: number, windowMs: number): number {
  return Math.min(windowMs, BASE_DELAY_MS * 2 ** (failures - limit))
}

/** Counts one attempt for the account at the address, or throws 429 with the seconds to wait. */
export async function reserveAttempt(deps: AppDeps, email: string, ip: string): Promise<Reservation> {
  const { db, clock, config } = deps
  const now = clock.now()
  const windowMs = config.SIGNIN_WINDOW_MINUTES * 60_000
  const account = email.trim().toLowerCase()
  const known = await repo.isKnownAddress(db, account, ip, new Date(now.getTime() - KNOWN_ADDRESS_DAYS * 86_400_000))
  const limits = new Map<string, number>([
    [`pair:${account}|${ip}`, config.SIGNIN_MAX_FAILURES_PER_ACCOUNT],
    [`addr:${ip}`, config.SIGNIN_MAX_FAILURES_PER_ADDRESS],
  ])
  if (!known) limits.set(`acct:${account}`, config.SIGNIN_MAX_FAILURES_PER_ACCOUNT)
  const keys = [...limits.keys()]
  const waitMs = await db.transaction().execute(async (trx) => {
    const rows = await repo.lockThrottleRows(trx, keys)
    for (const r of rows) {
      if (r.lastFailureAt && now.getTime() - r.lastFailureAt.getTime() > windowMs) {
        r.failures = 0
        r.blockedUntil = null
      }
    }
    const wait = Math.max(0, ...rows.map((r) => (r.blockedUntil ? r.blockedUntil.getTime() - now.getTime() : 0)))
    if (wait > 0) return wait // refused: not counted, not checked
    for (const r of rows) {
      const limit = limits.get(r.key)!
      r.failures += 1
      r.lastFailureAt = now
      r.blockedUntil = r.failures >= limit ? new Date(now.getTime() + delayMs(r.failures, limit, windowMs)) : null
      await repo.saveThrottleRow(trx, r)
    }
    return 0
  })
  if (waitMs > 0) {
    const seconds = Math.ceil(waitMs / 1000)
    throw new AppError(429, ErrorCode.RATE_LIMITED, `Too many failed attempts; try again in ${seconds} seconds`, {
      retryAfterSeconds: seconds,
    })
  }
  return {
    keys,
    // a success clears the account's keys and takes back the address's counted attempt; a failure stays counted
    async release(success: boolean) {
      if (!success) return
      await db.transaction().execute(async (trx) => {
        for (const r of await repo.lockThrottleRows(trx, keys)) {
          const failures = r.key.startsWith('addr:') ? Math.max(0, r.failures - 1) : 0
          const limit = limits.get(r.key)!
          await repo.saveThrottleRow(trx, {
            ...r,
            failures,
            blockedUntil: failures >= limit ? r.blockedUntil : null,
          })
        }
      })
    },
  }
}
