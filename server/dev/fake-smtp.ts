import type { AddressInfo } from 'node:net'
import { simpleParser, type ParsedMail } from 'mailparser'
import { SMTPServer } from 'smtp-server'
import { logger } from '../logger.ts'

export interface FakeSmtp {
  port: number
  inbox: ParsedMail[]
  close(): Promise<void>
  waitFor(pred: (m: ParsedMail) => boolean, timeoutMs?: number): Promise<ParsedMail>
}

/**
 * A local SMTP server that accepts every message and keeps it in memory: the stand-in for a plant's mail relay in
 * development and tests. The app sends to it through the same nodemailer path as to a real server.
 */
export async function startFakeSmtp(port = 0, opts: { quiet?: boolean } = {}): Promise<FakeSmtp> {
  const inbox: ParsedMail[] = []
  const waiters: { pred: (m: ParsedMail) => boolean; resolve: (m: ParsedMail) => void }[] = []
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS'],
    logger: false,
    onData(stream, _session, cb) {
      simpleParser(stream).then((m) => {
        inbox.push(m)
        if (!opts.quiet)
          logger.info(
            { component: 'fake-smtp', to: m.to && 'text' in m.to ? m.to.text : '', subject: m.subject ?? '' },
            'mail captured',
          )
        for (const w of [...waiters])
          if (w.pred(m)) {
            waiters.splice(waiters.indexOf(w), 1)
            w.resolve(m)
          }
        cb()
      }, cb)
    },
  })
  const listen = (p: number) =>
    new Promise<void>((resolve, reject) => {
      server.server.once('error', reject)
      server.listen(p, '127.0.0.1', () => resolve())
    })
  try {
    await listen(port)
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EADDRINUSE' || port === 0) throw err
    await listen(0)
  }
  return {
    port: (server.server.address() as AddressInfo).port,
    inbox,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
    waitFor(pred, timeoutMs = 10_000) {
      const hit = inbox.find(pred)
      if (hit) return Promise.resolve(hit)
      return new Promise((resolve, reject) => {
        const t = setTimeout(() => reject(new Error('no matching mail arrived')), timeoutMs)
        waiters.push({
          pred,
          resolve: (m) => {
            clearTimeout(t)
            resolve(m)
          },
        })
      })
    },
  }
}
