import type { ParsedMail } from 'mailparser'
import { afterAll, beforeAll } from 'vitest'
import { type FakeSmtp, startFakeSmtp } from '../../../server/dev/fake-smtp.ts'
import { createMailJob } from '../../../server/features/mail/mail.worker.ts'
import type { TestContext } from './test-db.ts'

/** The addresses a mail was sent to. */
export const recipients = (m: ParsedMail) =>
  m.to && !Array.isArray(m.to) ? m.to.value.map((a) => a.address ?? '') : []

/**
 * A fake SMTP server for the file's tests (on a free port, started before them and closed after them), with the
 * mail job run once against it.
 */
export function useFakeSmtp(ctx: TestContext) {
  let server: FakeSmtp | undefined
  beforeAll(async () => {
    server = await startFakeSmtp(0, { quiet: true })
  })
  afterAll(async () => {
    await server?.close()
  })
  const mail = {
    get smtp(): FakeSmtp {
      if (!server) throw new Error('the fake SMTP server starts in beforeAll')
      return server
    },
    /** Sends what the outbox holds now. */
    deliver: () =>
      createMailJob(ctx.db, { ...ctx.config, SMTP_PORT: mail.smtp.port }, ctx.clock).runDue(ctx.clock.now()),
    /** The mails received so far whose subject starts so. */
    startingWith: (subjectStart: string) => mail.smtp.inbox.filter((m) => (m.subject ?? '').startsWith(subjectStart)),
    /** Delivers the outbox, waits until every address has a mail whose subject starts so, and answers all of them. */
    async mailsFor(subjectStart: string, addresses: readonly string[]) {
      await mail.deliver()
      const about = (m: ParsedMail) => (m.subject ?? '').startsWith(subjectStart)
      for (const a of addresses) await mail.smtp.waitFor((m) => about(m) && recipients(m).includes(a))
      return mail.smtp.inbox.filter(about)
    },
  }
  return mail
}
