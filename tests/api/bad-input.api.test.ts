// Input no client may send reaches neither a query nor a jsonb column: the boundary answers 400 with the field,
// never 500, and nothing is written (the cases a probe of the API found answering 500).
import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb({ register: true })

const auditCount = async () =>
  Number(
    (
      await ctx.db
        .selectFrom('audit_event')
        .select((eb) => eb.fn.countAll().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )

describe('bad input answers 400, never 500', () => {
  it('refuses a NUL byte in the anonymous sign-in', async () => {
    const app = createApp(ctx)
    const a = new ApiAgent(app)
    await a.refreshCsrf()
    const before = await auditCount()
    const res = await a.post('/api/session', { email: 'a\u0000@x.example', password: 'whatever-it-is' })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
    expect(res.body.error.details.fields.email).toEqual(['Text must not contain the NUL character'])
    expect(await auditCount()).toBe(before)
  })

  it('refuses NUL in a query string, ids out of the int32 range and lone surrogates', async () => {
    const app = createApp(ctx)
    const engineer = await signedIn(app, 'engineer')
    const admin = await signedIn(app, 'admin')
    expect((await engineer.get('/api/limits?q=%00')).status).toBe(400)
    expect((await engineer.get('/api/limits/2147483648')).status).toBe(400)
    expect((await engineer.get('/api/limits?processId=99999999999')).status).toBe(400)
    expect((await engineer.get('/api/change-requests/2147483648')).status).toBe(400)
    const largest = await engineer.get('/api/limits/2147483647')
    expect(largest.status).toBe(404)
    expect((await engineer.get('/api/limits/%E0%A4%A')).status).toBe(400)

    const before = await auditCount()
    const user = await ctx.db
      .selectFrom('app_user')
      .select('id')
      .where('email', 'like', 'operator@%')
      .executeTakeFirstOrThrow()
    const lone = await admin.patch(`/api/users/${user.id}`, { displayName: 'Olive \ud800 Tanager' })
    expect(lone.status).toBe(400)
    expect(lone.body.error.details.fields.displayName[0]).toMatch(/unpaired surrogate/)
    // a well-formed pair (an emoji) is text like any other
    const pair = await admin.patch(`/api/users/${user.id}`, { displayName: 'Olive Tanager \ud83d\ude00' })
    expect(pair.status).toBe(200)
    expect(await auditCount()).toBe(before + 1)
  })

  it('refuses nesting deeper than the limit, and a forged register cursor', async () => {
    const app = createApp(ctx)
    const engineer = await signedIn(app, 'engineer')
    const before = await auditCount()
    const body = `{"title":"Deep","items":${'['.repeat(20_000)}1${']'.repeat(20_000)}}`
    const res = await engineer.post('/api/change-requests').set('Content-Type', 'application/json').send(body)
    expect(res.status).toBe(400)
    expect(res.body.error.message).toBe('Nested deeper than 32 levels')
    const forged = Buffer.from(JSON.stringify({ v: [{ x: 1 }, 'abc'], id: 1 })).toString('base64url')
    const cursor = await engineer.get(`/api/limits?sort=setpoint&cursor=${forged}`)
    expect(cursor.status).toBe(400)
    expect(await auditCount()).toBe(before)
  })
})
