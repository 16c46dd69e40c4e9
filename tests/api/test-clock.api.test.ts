import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { loadConfig } from '../../server/config.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

describe('POST /api/test/clock', () => {
  it("moves the server's clock when NODE_ENV=test", async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const target = '2031-02-03T04:05:06.789Z'
    const res = await a.post('/api/test/clock', { now: target }).expect(200)
    const answered = new Date(res.body.now).getTime()
    const t = new Date(target).getTime()
    expect(answered).toBeGreaterThanOrEqual(t)
    expect(answered - t).toBeLessThan(60_000)
    // the clock runs on from there
    const now = ctx.clock.now().getTime()
    expect(now).toBeGreaterThanOrEqual(answered)
    expect(now - t).toBeLessThan(60_000)

    // with an offset too, and what the server stamps follows it (the sign-in audit event)
    await a.post('/api/test/clock', { now: '2031-02-03T06:05:06.789+02:00' }).expect(200)
    const { user } = await a.signIn('auditor@fernhollow.example')
    const ev = await ctx.db
      .selectFrom('audit_event')
      .select('occurred_at')
      .where('action', '=', 'session.sign_in')
      .where('actor_id', '=', user.id)
      .orderBy('id', 'desc')
      .limit(1)
      .executeTakeFirstOrThrow()
    expect(ev.occurred_at.getTime() - t).toBeGreaterThanOrEqual(0)
    expect(ev.occurred_at.getTime() - t).toBeLessThan(60_000)
  })

  it('still needs the CSRF token and a valid time', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const before = ctx.clock.now().getTime()
    const noToken = await a.agent.post('/api/test/clock').send({ now: '2040-01-01T00:00:00Z' })
    expect(noToken.status).toBe(403)
    const bad = await a.post('/api/test/clock', { now: 'next tuesday' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.details.fields).toHaveProperty('now')
    const after = ctx.clock.now().getTime()
    expect(after - before).toBeLessThan(60_000) // not moved to 2040
  })

  it.each(['development', 'production'] as const)('does not exist when NODE_ENV=%s', async (nodeEnv) => {
    const config = loadConfig({
      NODE_ENV: nodeEnv,
      DATABASE_URL: ctx.database.appUrl,
      SESSION_SECRET: 'a-test-only-session-secret-0123456789',
      SMTP_PORT: '1',
    })
    const app = createApp({ ...ctx, config })
    const target = '2045-06-07T08:09:10.000Z'

    const admin = await signedIn(app, 'admin')
    const before = ctx.clock.now().getTime()
    const res = await admin.post('/api/test/clock', { now: target })
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('NOT_FOUND')
    // anonymous callers meet the sign-in wall like at any other unknown API path
    const anon = new ApiAgent(app)
    await anon.refreshCsrf()
    expect((await anon.post('/api/test/clock', { now: target })).status).toBe(401)

    const after = ctx.clock.now().getTime()
    expect(after).toBeGreaterThanOrEqual(before)
    expect(after - before).toBeLessThan(60_000)
  })
})
