import net from 'node:net'
import type { AddressInfo } from 'node:net'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { startFakeSmtp, type FakeSmtp } from '../../server/dev/fake-smtp.ts'
import { enqueueMail, mailBodies, type OutgoingMail } from '../../server/features/mail/mail.outbox.ts'
import { backoffMs, createMailJob } from '../../server/features/mail/mail.worker.ts'
import { JobScheduler } from '../../server/jobs/scheduler.ts'
import { signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
let smtp: FakeSmtp
let closedPort = 0

/** A port nobody listens on: bound, read and released again. */
function unusedPort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = net.createServer()
    s.once('error', reject)
    s.listen(0, '127.0.0.1', () => {
      const { port } = s.address() as AddressInfo
      s.close(() => resolve(port))
    })
  })
}

beforeAll(async () => {
  smtp = await startFakeSmtp(0, { quiet: true })
  closedPort = await unusedPort()
})
afterAll(async () => {
  await smtp?.close()
})

const job = () => createMailJob(ctx.db, { ...ctx.config, SMTP_PORT: smtp.port }, ctx.clock)
const jobWithSmtpDown = () => createMailJob(ctx.db, { ...ctx.config, SMTP_PORT: closedPort }, ctx.clock)
const delivered = (subject: string) => smtp.inbox.filter((m) => m.subject === subject)
const outboxRow = (subject: string) =>
  ctx.db.selectFrom('mail_outbox').selectAll().where('subject', '=', subject).executeTakeFirst()

function mail(subject: string): OutgoingMail {
  const { text, html } = mailBodies(
    ['Bypass of TZ-101 on Crude Unit expires in 1 hour.', 'Compensating measure: field operator at the heater <24/7>.'],
    { url: 'http://127.0.0.1:8080/bypasses/7', label: 'Open the bypass' },
  )
  return { to: 'supervisor@fernhollow.example', subject, text, html, topic: 'bypass.expiry' }
}

describe('mail outbox', () => {
  // common practice (transactional outbox): mail leaves only with the change that caused it
  it('sends nothing for a change that rolled back', async () => {
    const subject = 'Rolled back: bypass reminder'
    await expect(
      ctx.db.transaction().execute(async (trx) => {
        await enqueueMail(trx, ctx.clock, mail(subject))
        throw new Error('the change failed after queueing its mail')
      }),
    ).rejects.toThrow('the change failed')
    expect(await outboxRow(subject)).toBeUndefined()
    expect(await job().runDue(ctx.clock.now())).toEqual({ sent: 0, failed: 0 })
    expect(delivered(subject)).toEqual([])
  })

  it('delivers a committed mail once to the SMTP server, with text and HTML parts', async () => {
    const subject = 'Committed: bypass reminder ⏰'
    await ctx.db.transaction().execute((trx) => enqueueMail(trx, ctx.clock, mail(subject)))
    const queued = await outboxRow(subject)
    expect(queued).toMatchObject({ attempts: 0, sent_at: null, last_error: null })

    const result = await job().runDue(ctx.clock.now())
    expect(result).toEqual({ sent: 1, failed: 0 })
    const got = delivered(subject)
    expect(got).toHaveLength(1)
    const m = got[0]
    expect(m.subject).toBe(subject)
    expect(m.to && !Array.isArray(m.to) ? m.to.value.map((a) => a.address) : []).toEqual([
      'supervisor@fernhollow.example',
    ])
    expect(m.from?.value[0].address).toBe('limitkeeper@localhost')
    expect(m.text).toContain('Bypass of TZ-101 on Crude Unit expires in 1 hour.')
    expect(m.text).toContain('Open the bypass: http://127.0.0.1:8080/bypasses/7')
    expect(m.html).toContain('<a href="http://127.0.0.1:8080/bypasses/7">Open the bypass</a>')
    expect(m.html).toContain('&lt;24/7&gt;') // user text is escaped in the HTML part

    const sent = await outboxRow(subject)
    expect(sent).toMatchObject({ attempts: 1, last_error: null })
    expect(sent!.sent_at).toBeInstanceOf(Date)

    // a second run finds nothing due: delivered once
    expect(await job().runDue(ctx.clock.now())).toEqual({ sent: 0, failed: 0 })
    expect(delivered(subject)).toHaveLength(1)
  })

  it('keeps a mail when the SMTP server is down and retries after the back-off', async () => {
    const subject = 'SMTP down: escalation'
    await ctx.db.transaction().execute((trx) => enqueueMail(trx, ctx.clock, mail(subject)))
    const t0 = ctx.clock.now()
    expect(await jobWithSmtpDown().runDue(t0)).toEqual({ sent: 0, failed: 1 })

    const failed = await outboxRow(subject)
    expect(failed).toMatchObject({ attempts: 1, sent_at: null })
    expect(failed!.last_error).toMatch(/ECONNREFUSED/)
    expect(failed!.next_attempt_at.getTime()).toBe(t0.getTime() + backoffMs(1))
    expect(backoffMs(1)).toBe(60_000)

    // the server is back, but the mail is not due before the back-off has passed
    ctx.clock.set(new Date(t0.getTime() + 59_999))
    expect(await job().runDue(new Date(t0.getTime() + 59_999))).toEqual({ sent: 0, failed: 0 })
    expect(delivered(subject)).toEqual([])

    // second failure at +60 s doubles the back-off
    const t1 = new Date(t0.getTime() + 60_000)
    ctx.clock.set(t1)
    expect(await jobWithSmtpDown().runDue(t1)).toEqual({ sent: 0, failed: 1 })
    const again = await outboxRow(subject)
    expect(again).toMatchObject({ attempts: 2, sent_at: null })
    expect(again!.next_attempt_at.getTime()).toBe(t1.getTime() + 120_000)
    expect(await job().runDue(new Date(t1.getTime() + 119_999))).toEqual({ sent: 0, failed: 0 })

    const t2 = new Date(t1.getTime() + 120_000)
    ctx.clock.set(t2)
    expect(await job().runDue(t2)).toEqual({ sent: 1, failed: 0 })
    expect(delivered(subject)).toHaveLength(1)
    const sent = await outboxRow(subject)
    expect(sent).toMatchObject({ attempts: 3, last_error: null })
    expect(sent!.sent_at!.getTime()).toBeGreaterThanOrEqual(t2.getTime())
  })

  it('delivers each mail once when two workers run at the same time', async () => {
    const subjects = Array.from({ length: 12 }, (_, i) => `Parallel ${i}`)
    await ctx.db.transaction().execute((trx) => enqueueMail(trx, ctx.clock, subjects.map(mail)))
    const now = ctx.clock.now()
    const [a, b] = await Promise.all([job().runDue(now), job().runDue(now)])
    expect(a.sent + b.sent).toBe(subjects.length)
    for (const s of subjects) expect(delivered(s)).toHaveLength(1)
  })

  it('shows the outbox with delivery state to admins only (GET /api/mail)', async () => {
    const app = createApp(ctx)
    const admin = await signedIn(app, 'admin')
    const list = await admin.get('/api/mail').expect(200)
    expect(list.body.total).toBeGreaterThanOrEqual(14)
    const down = list.body.items.find((m: { subject: string }) => m.subject === 'SMTP down: escalation')
    expect(down).toMatchObject({
      to: 'supervisor@fernhollow.example',
      attempts: 3,
      lastError: null,
      topic: 'bypass.expiry',
    })
    expect(down.sentAt).toEqual(expect.any(String))

    const sent = await admin.get('/api/mail?state=sent').expect(200)
    expect(sent.body.items.every((m: { sentAt: string | null }) => m.sentAt !== null)).toBe(true)

    for (const who of ['engineer', 'manager', 'auditor', 'operator']) {
      const other = await signedIn(app, who)
      const res = await other.get('/api/mail')
      expect(res.status).toBe(403)
      expect(res.body.error.code).toBe('FORBIDDEN')
    }
  })

  // a message about lost protection must not wait behind a backlog (a failed test, an overdue bypass)
  it('delivers the urgent lane before an older backlog', async () => {
    await ctx.db.transaction().execute(async (trx) => {
      const backlog = Array.from({ length: 40 }, (_, i) => ({
        ...mail(`Backlog digest ${i}`),
        topic: 'trip_test_digest',
      }))
      await enqueueMail(trx, ctx.clock, backlog)
    })
    await ctx.db
      .transaction()
      .execute((trx) =>
        enqueueMail(trx, ctx.clock, { ...mail('DEGRADED: TZ-101 failed its trip test'), topic: 'trip_test' }),
      )
    const before = smtp.inbox.length
    await job().runDue(ctx.clock.now())
    const order = smtp.inbox.slice(before).map((m) => m.subject)
    expect(order).toHaveLength(41)
    expect(order[0]).toBe('DEGRADED: TZ-101 failed its trip test')
    expect(order.slice(1)).toEqual(Array.from({ length: 40 }, (_, i) => `Backlog digest ${i}`))
  })

  // shutdown stops taking new work: the running batch ends after the message in hand
  it('stops a delivery run at shutdown instead of finishing the batch', async () => {
    await ctx.db.transaction().execute((trx) =>
      enqueueMail(
        trx,
        ctx.clock,
        Array.from({ length: 150 }, (_, i) => ({ ...mail(`Stop test ${i}`), topic: 'general' })),
      ),
    )
    const scheduler = new JobScheduler(ctx.db, ctx.clock, [job()], () => {})
    await scheduler.register()
    scheduler.start(60)
    const stopTest = () => smtp.inbox.filter((m) => m.subject?.startsWith('Stop test ')).length
    const end = Date.now() + 30_000
    while (stopTest() === 0 && Date.now() < end) await new Promise((r) => setTimeout(r, 5))
    await scheduler.stop()
    const atStop = stopTest()
    expect(atStop).toBeGreaterThan(0)
    expect(atStop).toBeLessThan(150)
    const left = await ctx.db
      .selectFrom('mail_outbox')
      .select((eb) => eb.fn.countAll().as('n'))
      .where('subject', 'like', 'Stop test %')
      .where('sent_at', 'is', null)
      .executeTakeFirstOrThrow()
    expect(Number(left.n)).toBe(150 - atStop)
  })
})
