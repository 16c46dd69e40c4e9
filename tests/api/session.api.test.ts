import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

const MINUTE = 60_000

/** The session id inside the signed `limitkeeper.sid` cookie of a response (`s:<sid>.<signature>`), or null. */
function sidFrom(res: { headers: Record<string, unknown> }): string | null {
  const raw = res.headers['set-cookie']
  const cookies = Array.isArray(raw) ? (raw as string[]) : typeof raw === 'string' ? [raw] : []
  const c = cookies.find((x) => x.startsWith('limitkeeper.sid='))
  if (!c) return null
  const value = decodeURIComponent(c.split(';')[0].slice('limitkeeper.sid='.length))
  return value.startsWith('s:') ? value.slice(2, value.lastIndexOf('.')) : value
}

async function sessionRowExists(sid: string) {
  return Boolean(await ctx.db.selectFrom('session').select('sid').where('sid', '=', sid).executeTakeFirst())
}

describe('/api/session', () => {
  it('signs in, keeps the session in PostgreSQL and signs out', async () => {
    const app = createApp(ctx)
    const a = await signedIn(app, 'engineer')
    const sessions = await ctx.db.selectFrom('session').select('sid').execute()
    expect(sessions.length).toBeGreaterThan(0)
    const me = await a.get('/api/session').expect(200)
    expect(me.body.user.email).toBe('engineer@fernhollow.example')
    await a.delete('/api/session').expect(204)
    const after = await a.get('/api/session').expect(200)
    expect(after.body.user).toBeNull()
    const events = await ctx.db
      .selectFrom('audit_event')
      .select('action')
      .where('action', 'like', 'session.%')
      .execute()
    expect(events.map((e) => e.action)).toEqual(expect.arrayContaining(['session.sign_in', 'session.sign_out']))
  })

  it('answers the same message for an unknown account and a wrong password', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const unknown = await a
      .post('/api/session', { email: 'nobody@fernhollow.example', password: 'whatever-123' })
      .expect(401)
    const wrong = await a
      .post('/api/session', { email: 'auditor@fernhollow.example', password: 'whatever-123' })
      .expect(401)
    expect(unknown.body.error.message).toBe(wrong.body.error.message)
  })

  it('refuses a state-changing request without the CSRF token', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const res = await a.agent
      .post('/api/session')
      .send({ email: 'engineer@fernhollow.example', password: 'limitkeeper-demo' })
      .expect(403)
    expect(res.body.error.code).toBe('CSRF_INVALID')
  })

  // OWASP ASVS 4.0 3.2.1: a new session token at authentication (session fixation); the old one is gone from the store
  it('gives a new session id at sign-in and drops the anonymous one', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    const anon = await a.refreshCsrf()
    const anonSid = sidFrom(anon)
    expect(anonSid).toBeTruthy()
    expect(await sessionRowExists(anonSid!)).toBe(true)

    const res = await a
      .post('/api/session', { email: 'operator@fernhollow.example', password: 'limitkeeper-demo' })
      .expect(201)
    const signedSid = sidFrom(res)
    expect(signedSid).toBeTruthy()
    expect(signedSid).not.toBe(anonSid)
    expect(await sessionRowExists(anonSid!)).toBe(false)
    expect(await sessionRowExists(signedSid!)).toBe(true)
  })

  // OWASP CSRF Prevention Cheat Sheet (synchronizer token): the token is renewed with the session at sign-in
  it('returns a fresh CSRF token at sign-in; the anonymous one stops working', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const anonToken = a.csrf
    expect(anonToken).toMatch(/^[\w-]{20,}$/)
    const res = await a
      .post('/api/session', { email: 'auditor@fernhollow.example', password: 'limitkeeper-demo' })
      .expect(201)
    expect(res.body.csrfToken).toMatch(/^[\w-]{20,}$/)
    expect(res.body.csrfToken).not.toBe(anonToken)
    expect(res.body.user.email).toBe('auditor@fernhollow.example')

    // the old token is refused, the new one accepted (sign-out is a state-changing call)
    const stale = await a.agent.delete('/api/session').set('X-CSRF-Token', anonToken).expect(403)
    expect(stale.body.error.code).toBe('CSRF_INVALID')
    await a.agent.delete('/api/session').set('X-CSRF-Token', res.body.csrfToken).expect(204)
  })

  // OWASP ASVS 4.0 3.3.2 (level 2): idle timeout, 30 minutes by default
  it('ends a session idle for more than 30 minutes', async () => {
    const app = createApp(ctx)
    const a = await signedIn(app, 'engineer')
    ctx.clock.advance(29 * MINUTE)
    await a.get('/api/sites').expect(200)
    ctx.clock.advance(31 * MINUTE)
    const res = await a.get('/api/sites').expect(401)
    expect(res.body.error.code).toBe('SESSION_EXPIRED')
    // the session stays ended: the next call is simply anonymous
    const again = await a.get('/api/sites').expect(401)
    expect(again.body.error.code).toBe('UNAUTHENTICATED')
  })

  it('answers GET /api/session after expiry as anonymous with a new CSRF token, so the client can sign in again', async () => {
    const app = createApp(ctx)
    const a = await signedIn(app, 'technician')
    const oldToken = a.csrf
    ctx.clock.advance(31 * MINUTE)
    const res = await a.get('/api/session').expect(200)
    expect(res.body.user).toBeNull()
    expect(res.body.rules).toEqual([])
    expect(res.body.csrfToken).toMatch(/^[\w-]{20,}$/)
    expect(res.body.csrfToken).not.toBe(oldToken)
    a.csrf = res.body.csrfToken
    await a.signIn('technician@fernhollow.example')
    await a.get('/api/sites').expect(200)
  })

  // OWASP ASVS 4.0 3.3.2 (level 2): absolute lifetime, 12 hours by default, even for a session in constant use
  it('ends a session 12 hours after sign-in although it was used every 20 minutes', async () => {
    const app = createApp(ctx)
    const a = await signedIn(app, 'approver')
    for (let i = 1; i <= 35; i++) {
      ctx.clock.advance(20 * MINUTE) // 35 × 20 min = 11 h 40 min
      await a.get('/api/sites').expect(200)
    }
    ctx.clock.advance(19 * MINUTE) // 11 h 59 min: still inside
    await a.get('/api/sites').expect(200)
    ctx.clock.advance(2 * MINUTE) // 12 h 01 min: past the absolute lifetime, though idle only 2 min
    const res = await a.get('/api/sites').expect(401)
    expect(res.body.error.code).toBe('SESSION_EXPIRED')
  })

  it('takes access away from a deactivated account at once, and refuses its sign-in', async () => {
    const app = createApp(ctx)
    const admin = await signedIn(app, 'admin')
    const created = await admin
      .post('/api/users', {
        email: 'leaver@fernhollow.example',
        displayName: 'Lena Leaver',
        password: 'correct-horse-battery',
        roles: [{ siteId: 1, role: 'operator' }],
      })
      .expect(201)

    const leaver = new ApiAgent(app)
    await leaver.signIn('leaver@fernhollow.example', 'correct-horse-battery')
    await leaver.get('/api/sites').expect(200)

    await admin.patch(`/api/users/${created.body.id}`, { active: false }).expect(200)
    const res = await leaver.get('/api/sites').expect(401)
    expect(res.body.error.code).toBe('UNAUTHENTICATED')
    const me = await leaver.get('/api/session').expect(200)
    expect(me.body.user).toBeNull()

    const again = new ApiAgent(app)
    await again.refreshCsrf()
    const refused = await again
      .post('/api/session', { email: 'leaver@fernhollow.example', password: 'correct-horse-battery' })
      .expect(401)
    expect(refused.body.error.code).toBe('INVALID_CREDENTIALS')
  })
})
