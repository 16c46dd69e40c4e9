import { Writable } from 'node:stream'
import pino from 'pino'
import { describe, expect, it } from 'vitest'
import { REDACTED_PATHS } from '../../../server/logger.ts'

// OWASP Logging Cheat Sheet ("Data to exclude"): passwords, session ids, access tokens never reach a log.
function capture() {
  const lines: string[] = []
  const stream = new Writable({
    write(chunk, _enc, done) {
      lines.push(String(chunk))
      done()
    },
  })
  const log = pino({ level: 'info', redact: { paths: REDACTED_PATHS, censor: '[redacted]' } }, stream)
  return { log, lines }
}

describe('the server log', () => {
  it('censors passwords, CSRF tokens, cookies and signature bodies, wherever they sit', () => {
    const { log, lines } = capture()
    log.info({ password: 'correct horse battery', body: { currentPassword: 'old one', newPassword: 'new one' } }, 'x')
    log.info({ req: { headers: { cookie: 'lk.sid=s%3Asecret', 'x-csrf-token': 'tok-123' } } }, 'y')
    log.info(
      { res: { headers: { 'set-cookie': 'lk.sid=s%3Anew' } }, input: { signature: 'base64sig', token: 't' } },
      'z',
    )
    const text = lines.join('')
    for (const secret of [
      'correct horse battery',
      'old one',
      'new one',
      's%3Asecret',
      'tok-123',
      's%3Anew',
      'base64sig',
    ])
      expect(text).not.toContain(secret)
    expect(text.match(/\[redacted\]/g)?.length).toBeGreaterThanOrEqual(7)
  })
})
