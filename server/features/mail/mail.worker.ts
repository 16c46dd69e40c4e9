import nodemailer from 'nodemailer'
import type { Clock, DueJob } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { Db } from '../../db/index.ts'
import { logger } from '../../logger.ts'
import { claimNextMail, markMailFailed, markMailSent } from './mail.repository.ts'

/** Back-off after the n-th failed attempt: 1, 2, 4 … minutes, at most 1 h. */
export function backoffMs(attempts: number): number {
  return Math.min(60, 2 ** Math.max(0, attempts - 1)) * 60_000
}

export function createTransport(
  config: Pick<Config, 'SMTP_HOST' | 'SMTP_PORT' | 'SMTP_SECURE' | 'SMTP_USER' | 'SMTP_PASS'>,
) {
  return nodemailer.createTransport({
    host: config.SMTP_HOST,
    port: config.SMTP_PORT,
    secure: config.SMTP_SECURE,
    ignoreTLS: !config.SMTP_SECURE && config.SMTP_HOST === '127.0.0.1',
    auth: config.SMTP_USER ? { user: config.SMTP_USER, pass: config.SMTP_PASS ?? '' } : undefined,
    connectionTimeout: 10_000,
    greetingTimeout: 10_000,
    socketTimeout: 20_000,
  })
}

/**
 * Delivers due outbox rows one at a time, each in a short transaction holding its row with FOR UPDATE SKIP LOCKED,
 * so several app instances never send the same mail at once. Delivery is at-least-once. The urgent lane
 * (priority 0) goes first, so a message about lost protection never waits behind a backlog; at shutdown (signal)
 * the loop stops before the next message.
 */
export function createMailJob(db: Db, config: Config, clock: Clock): DueJob<{ sent: number; failed: number }> {
  const transport = createTransport(config)
  return {
    name: 'mail.deliver',
    intervalSec: 5,
    async runDue(now: Date, signal?: AbortSignal) {
      let sent = 0
      let failed = 0
      const log = logger.child({ component: 'mail' })
      for (let i = 0; i < 200 && !signal?.aborted; i++) {
        const done = await db.transaction().execute(async (trx) => {
          const row = await claimNextMail(trx, now)
          if (!row) return 'empty'
          try {
            await transport.sendMail({
              from: config.MAIL_FROM,
              to: row.to_addr,
              subject: row.subject,
              text: row.text_body,
              html: row.html_body ?? undefined,
            })
            await markMailSent(trx, row.id, clock.now())
            log.info({ mailId: row.id, topic: row.topic, priority: row.priority }, 'mail delivered')
            return 'sent'
          } catch (err) {
            const attempts = row.attempts + 1
            await markMailFailed(trx, row.id, {
              attempts,
              last_error: err instanceof Error ? err.message.slice(0, 500) : String(err),
              next_attempt_at: new Date(now.getTime() + backoffMs(attempts)),
            })
            log.warn({ mailId: row.id, topic: row.topic, attempts, error: String(err) }, 'mail delivery failed')
            return 'failed'
          }
        })
        if (done === 'empty') break
        if (done === 'sent') sent++
        else failed++
      }
      return { sent, failed }
    },
  }
}
