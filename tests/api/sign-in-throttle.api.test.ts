import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { verifySignaturePassword } from '../../server/features/session/session.service.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// Throttling of password guesses: OWASP ASVS 4.0.3 §2.2.1 (anti-automation: rate limiting and ever-increasing
// delays, not a hard lock-out anyone can trigger), counted atomically before the password is checked. Small limits
// for this file; TRUST_PROXY lets each test come from its own client address (X-Forwarded-For). Addresses from the
// documentation ranges (RFC 5737).
const ctx = useTestDb({
  env: {
    SIGNIN_MAX_FAILURES_PER_ACCOUNT: '5',
    SIGNIN_MAX_FAILURES_PER_ADDRESS: '20',
    SIGNIN_WINDOW_MINUTES: '15',
    TRUST_PROXY: 'true',
  },
})

async function attempt(a: ApiAgent, ip: string, email: string, password: string) {
  return a.post('/api/session', { email, password }).set('X-Forwarded-For', ip)
}

async function freshAgent() {
  const a = new ApiAgent(createApp(ctx))
  await a.refreshCsrf()
  return a
}

/** Passwords actually checked (argon2 ran) and found wrong, as the audit trail records them. */
async function checkedWrong(email: string) {
  const rows = await ctx.db
    .selectFrom('audit_event')
    .select('after')
    .where('action', '=', 'session.sign_in_failed')
    .execute()
  return rows.filter((r) => (r.after as { email?: string }).email === email).length
}

describe('sign-in throttling', () => {
  it('checks at most the limit of 40 parallel guesses for one account and address, the right password included', async () => {
    const email = 'technician@fernhollow.example'
    const ip = '192.0.2.10'
    const agents = await Promise.all(Array.from({ length: 40 }, () => freshAgent()))
    const right = await freshAgent()
    const answers = await Promise.all([
      ...agents.map((a) => attempt(a, ip, email, 'not-the-password')),
      attempt(right, ip, email, DEMO_PASSWORD),
    ])
    const statuses = answers.map((r) => r.status)
    // five reservations (the limit) got their password checked; everything else was refused before argon2
    expect(statuses.filter((s) => s === 429).length).toBe(41 - 5)
    expect(statuses.filter((s) => s === 401 || s === 201).length).toBe(5)
    const rightAnswer = answers[40]
    if (rightAnswer.status === 201) expect(await checkedWrong(email)).toBe(4)
    else expect(await checkedWrong(email)).toBe(statuses.filter((s) => s === 401).length)
    expect(await checkedWrong(email)).toBeLessThanOrEqual(5)
  })

  it('60 parallel sprays from one address on many accounts: at most the address limit are checked', async () => {
    const ip = '192.0.2.60'
    const agents = await Promise.all(Array.from({ length: 60 }, () => freshAgent()))
    const answers = await Promise.all(agents.map((a, i) => attempt(a, ip, `spray-${i}@fernhollow.example`, 'guess')))
    expect(answers.filter((r) => r.status === 401).length).toBe(20)
    expect(answers.filter((r) => r.status === 429).length).toBe(40)
  })

  it('delays grow with each failure instead of a fixed lock-out, and a known address keeps working', async () => {
    const email = 'approver@fernhollow.example'
    const home = '198.51.100.7'
    const attacker = '203.0.113.99'
    // the approver signs in from their usual address once: it becomes a known address of the account
    const own = await freshAgent()
    expect((await attempt(own, home, email, DEMO_PASSWORD)).status).toBe(201)

    const a = await freshAgent()
    for (let i = 0; i < 5; i++) expect((await attempt(a, attacker, email, 'guess')).status).toBe(401)
    const first = await attempt(a, attacker, email, DEMO_PASSWORD)
    expect(first.status).toBe(429)
    expect(first.body.error.details.retryAfterSeconds).toBe(30)
    // the approver at their known address is not held back by the attacker's guesses
    const b = await freshAgent()
    expect((await attempt(b, home, email, DEMO_PASSWORD)).status).toBe(201)
    // and neither are their electronic signatures there
    const user = await ctx.db.selectFrom('app_user').select('id').where('email', '=', email).executeTakeFirstOrThrow()
    await expect(
      verifySignaturePassword(
        ctx,
        user.id,
        DEMO_PASSWORD,
        { actorId: user.id, requestId: 't', ip: home },
        {
          entityType: 'ChangeRequest',
          entityId: 1,
        },
      ),
    ).resolves.toMatchObject({ id: user.id })

    // the attacker waits out each delay, and each new failure doubles it: 30 s, 60 s, 120 s
    ctx.clock.advance(31_000)
    expect((await attempt(a, attacker, email, 'guess')).status).toBe(401)
    expect((await attempt(a, attacker, email, 'guess')).body.error.details.retryAfterSeconds).toBe(60)
    ctx.clock.advance(61_000)
    expect((await attempt(a, attacker, email, 'guess')).status).toBe(401)
    expect((await attempt(a, attacker, email, 'guess')).body.error.details.retryAfterSeconds).toBe(120)
    // after a quiet window the count starts again
    ctx.clock.advance(16 * 60_000)
    expect((await attempt(a, attacker, email, DEMO_PASSWORD)).status).toBe(201)
  })

  it('counts signature passwords atomically too: 40 parallel wrong ones, at most 5 checked', async () => {
    const email = 'auditor@fernhollow.example'
    const user = await ctx.db.selectFrom('app_user').select('id').where('email', '=', email).executeTakeFirstOrThrow()
    const auditCtx = { actorId: user.id, requestId: 'sig-burst', ip: '203.0.113.40' }
    const results = await Promise.allSettled(
      Array.from({ length: 40 }, () =>
        verifySignaturePassword(ctx, user.id, 'not-the-password', auditCtx, {
          entityType: 'ChangeRequest',
          entityId: 1,
        }),
      ),
    )
    const codes = results.map((r) => (r.status === 'rejected' ? (r.reason as { status: number }).status : 200))
    expect(codes.filter((c) => c === 403).length).toBe(5)
    expect(codes.filter((c) => c === 429).length).toBe(35)
  })
})

describe('POST /api/account/password', () => {
  it('counts and audits wrong current passwords like a sign-in, and throttles them', async () => {
    const app = createApp(ctx)
    const op = await signedIn(app, 'operator')
    const statuses: number[] = []
    for (let i = 0; i < 8; i++) {
      const res = await op.post('/api/account/password', {
        currentPassword: `guess-${i}`,
        newPassword: 'Kestrel harbour lantern 71',
      })
      statuses.push(res.status)
    }
    expect(statuses).toEqual([400, 400, 400, 400, 400, 429, 429, 429])
    const failed = await ctx.db
      .selectFrom('audit_event')
      .select('id')
      .where('action', '=', 'user.password_change_failed')
      .execute()
    expect(failed).toHaveLength(5)
  })

  it('ends every other session of the account on a password change and on an admin reset', async () => {
    const app = createApp(ctx)
    const here = await signedIn(app, 'manager')
    const elsewhere = await signedIn(app, 'manager')
    await here
      .post('/api/account/password', { currentPassword: DEMO_PASSWORD, newPassword: 'Heron quarry tinsel 4811' })
      .expect(204)
    expect((await here.get('/api/session').expect(200)).body.user?.email).toBe('manager@fernhollow.example')
    expect((await elsewhere.get('/api/session').expect(200)).body.user).toBeNull()

    const admin = await signedIn(app, 'admin')
    const user = await ctx.db
      .selectFrom('app_user')
      .select('id')
      .where('email', '=', 'manager@fernhollow.example')
      .executeTakeFirstOrThrow()
    await admin.patch(`/api/users/${user.id}`, { password: 'Copper meadow violin 2207' }).expect(200)
    expect((await here.get('/api/session').expect(200)).body.user).toBeNull()
  })

  // NIST SP 800-63B §5.1.1.2: refuse common, repetitive and context-specific passwords; no composition rules
  it('refuses trivial and common passwords and lets a long passphrase through', async () => {
    const app = createApp(ctx)
    const sup = await signedIn(app, 'supervisor')
    for (const weak of [' '.repeat(12), 'aaaaaaaaaaaa', 'password1234', 'qwertyuiop12', 'fernhollow2026']) {
      const res = await sup.post('/api/account/password', { currentPassword: DEMO_PASSWORD, newPassword: weak })
      expect(res.status, weak).toBe(400)
      expect(res.body.error.details.fields.newPassword[0]).toMatch(/too easy to guess|only spaces/)
    }
    await sup
      .post('/api/account/password', {
        currentPassword: DEMO_PASSWORD,
        newPassword: 'correct horse battery staple orbit',
      })
      .expect(204)
  })
})
