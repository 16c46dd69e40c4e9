import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { verifySignaturePassword } from '../../server/features/session/session.service.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// Small thresholds for this file; TRUST_PROXY lets each test come from its own client address (X-Forwarded-For),
// as behind the plant's reverse proxy.
const ctx = useTestDb({
  env: {
    SIGNIN_MAX_FAILURES_PER_ACCOUNT: '3',
    SIGNIN_MAX_FAILURES_PER_ADDRESS: '5',
    SIGNIN_WINDOW_MINUTES: '15',
    TRUST_PROXY: 'true',
  },
})

const WINDOW_MS = 15 * 60_000

/** Signs in from a client address; answers the response (no status expectation). */
async function attempt(a: ApiAgent, ip: string, email: string, password: string) {
  return a.post('/api/session', { email, password }).set('X-Forwarded-For', ip)
}

async function freshAgent() {
  const a = new ApiAgent(createApp(ctx))
  await a.refreshCsrf()
  return a
}

async function failuresRecorded(where: { email?: string; ip?: string }) {
  let q = ctx.db
    .selectFrom('sign_in_attempt')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('success', '=', false)
  if (where.email) q = q.where('email', '=', where.email)
  if (where.ip) q = q.where('ip', '=', where.ip)
  return (await q.executeTakeFirstOrThrow()).n
}

// Addresses from the documentation ranges (RFC 5737).
describe('sign-in rate limiting (OWASP ASVS 4.0 2.2.1)', () => {
  it('throttles an account after its failures, from any address, even with the correct password, until the window passes', async () => {
    const email = 'technician@fernhollow.example'
    const a = await freshAgent()
    for (let i = 0; i < 3; i++) {
      const res = await attempt(a, '192.0.2.10', email, 'not-the-password')
      expect(res.status).toBe(401)
      expect(res.body.error.code).toBe('INVALID_CREDENTIALS')
    }
    expect(await failuresRecorded({ email })).toBe(3)

    // correct password, other address: still refused while the account is throttled
    const b = await freshAgent()
    const throttled = await attempt(b, '192.0.2.11', email, DEMO_PASSWORD)
    expect(throttled.status).toBe(429)
    expect(throttled.body.error.code).toBe('RATE_LIMITED')
    // a refused attempt is not checked and not counted, so it does not extend the lock-out
    expect(await failuresRecorded({ email })).toBe(3)

    // the address itself is not throttled: another account signs in from it
    const c = await freshAgent()
    expect((await attempt(c, '192.0.2.10', 'approver@fernhollow.example', DEMO_PASSWORD)).status).toBe(201)

    ctx.clock.advance(WINDOW_MS - 60_000)
    expect((await attempt(b, '192.0.2.11', email, DEMO_PASSWORD)).status).toBe(429)
    ctx.clock.advance(60_000 + 1_000) // the failures are now older than the window
    const ok = await attempt(b, '192.0.2.11', email, DEMO_PASSWORD)
    expect(ok.status).toBe(201)
    expect(ok.body.user.email).toBe(email)
  })

  it('throttles an address after failures on many accounts, even for a correct password, until the window passes', async () => {
    const ip = '198.51.100.20'
    const a = await freshAgent()
    // five different (unknown) accounts, one failure each: no account reaches its own threshold
    for (let i = 0; i < 5; i++) {
      const res = await attempt(a, ip, `guess-${i}@fernhollow.example`, 'not-the-password')
      expect(res.status).toBe(401)
    }
    expect(await failuresRecorded({ ip })).toBe(5)

    const throttled = await attempt(a, ip, 'operator@fernhollow.example', DEMO_PASSWORD)
    expect(throttled.status).toBe(429)
    expect(throttled.body.error.code).toBe('RATE_LIMITED')

    // the same account from another address is fine: the account has no failures
    const other = await freshAgent()
    expect((await attempt(other, '198.51.100.21', 'operator@fernhollow.example', DEMO_PASSWORD)).status).toBe(201)

    ctx.clock.advance(WINDOW_MS + 1_000)
    const ok = await attempt(a, ip, 'operator@fernhollow.example', DEMO_PASSWORD)
    expect(ok.status).toBe(201)
  })

  it('gives the same 401 for unknown accounts and wrong passwords below the threshold, and counts both', async () => {
    const ip = '203.0.113.30'
    const a = await freshAgent()
    const unknown = await attempt(a, ip, 'nobody@fernhollow.example', 'not-the-password')
    const wrong = await attempt(a, ip, 'manager@fernhollow.example', 'not-the-password')
    expect(unknown.status).toBe(401)
    expect(wrong.status).toBe(401)
    expect(unknown.body).toEqual(wrong.body) // OWASP ASVS 4.0 2.2.1 / 3.2: no account enumeration through messages
    expect(await failuresRecorded({ ip })).toBe(2)
  })

  // 21 CFR 11.300(d) (attempts at unauthorized use) and the issue: password re-entry for a signature counts too
  it('counts wrong passwords at an electronic signature against the same account limit', async () => {
    const email = 'auditor@fernhollow.example'
    const user = await ctx.db.selectFrom('app_user').select('id').where('email', '=', email).executeTakeFirstOrThrow()
    const auditCtx = { actorId: user.id, requestId: 'rate-limit-test', ip: '203.0.113.40' }
    for (let i = 0; i < 3; i++) {
      await expect(
        verifySignaturePassword(ctx, user.id, 'not-the-password', auditCtx, {
          entityType: 'ChangeRequest',
          entityId: 1,
        }),
      ).rejects.toMatchObject({ status: 403, code: 'SIGNATURE_INVALID' })
    }
    // a fourth signature attempt, with the right password, is throttled
    await expect(
      verifySignaturePassword(ctx, user.id, DEMO_PASSWORD, auditCtx, { entityType: 'ChangeRequest', entityId: 1 }),
    ).rejects.toMatchObject({ status: 429, code: 'RATE_LIMITED' })
    // and so is sign-in for that account from anywhere
    const a = await freshAgent()
    expect((await attempt(a, '203.0.113.41', email, DEMO_PASSWORD)).status).toBe(429)

    ctx.clock.advance(WINDOW_MS + 1_000)
    await expect(
      verifySignaturePassword(ctx, user.id, DEMO_PASSWORD, auditCtx, { entityType: 'ChangeRequest', entityId: 1 }),
    ).resolves.toMatchObject({ id: user.id })
  })
})
