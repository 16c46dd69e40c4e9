import type { Express } from 'express'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { changeFeedOf } from '../../server/db/change-feed.ts'
import { createDb } from '../../server/db/index.ts'
import type { AppDeps } from '../../server/deps.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { buildHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Two app instances on one database, each with its own pool and change feed (docs/architecture.md, "Caches and
// change notifications"): what one instance changes, the other's caches drop.
const ctx = useTestDb()

let appA: Express
let appB: Express
let depsB: AppDeps

/** Waits until `check` holds (another instance hears of a change through PostgreSQL, a moment after commit). */
async function eventually(check: () => Promise<boolean>, what: string, timeoutMs = 15_000) {
  const end = Date.now() + timeoutMs
  while (Date.now() < end) {
    if (await check()) return
    await new Promise((r) => setTimeout(r, 25))
  }
  throw new Error(`timed out waiting until ${what}`)
}

/** Signs in on one app and answers the session cookie, to be sent to the other. */
async function sessionCookie(app: Express, email: string, password = DEMO_PASSWORD) {
  const agent = new ApiAgent(app)
  await agent.signIn(email, password)
  const res = await agent.get('/api/session').expect(200)
  const cookie = (res.request as unknown as { cookies: string }).cookies
  return { agent, cookie }
}

beforeAll(async () => {
  appA = createApp(ctx)
  const b = createDb(ctx.database.appUrl, 4)
  depsB = { ...ctx, db: b.db, pool: b.pool }
  appB = createApp(depsB)
  // both feeds listen before the tests start, so the caches serve from memory
  expect(await changeFeedOf(ctx.pool)!.ready()).toBe(true)
  expect(await changeFeedOf(depsB.pool)!.ready()).toBe(true)
})
afterAll(async () => {
  await depsB?.db.destroy()
})

describe('caches of several instances', () => {
  it('a session made on one instance works on the other, and ends on both at sign-out', async () => {
    const { agent, cookie } = await sessionCookie(appA, 'engineer@fernhollow.example')
    const onB = await request(appB).get('/api/session').set('Cookie', cookie).expect(200)
    expect(onB.body.user.email).toBe('engineer@fernhollow.example')
    await request(appB).get('/api/sites').set('Cookie', cookie).expect(200)

    await agent.delete('/api/session').expect(204)
    await eventually(
      async () => (await request(appB).get('/api/sites').set('Cookie', cookie)).status === 401,
      'instance B refuses the ended session',
    )
  })

  it('a role taken away on one instance is taken away on the other', async () => {
    const admin = await signedIn(appA, 'admin')
    const created = await admin
      .post('/api/users', {
        email: 'mover@fernhollow.example',
        displayName: 'Mina Mover',
        password: 'correct-horse-battery',
        roles: [{ siteId: 1, role: 'safety_engineer' }],
      })
      .expect(201)
    const { cookie } = await sessionCookie(appB, 'mover@fernhollow.example', 'correct-horse-battery')
    const canCreate = async () =>
      (await request(appB).get('/api/session').set('Cookie', cookie).expect(200)).body.user.roles.some(
        (r: { role: string }) => r.role === 'safety_engineer',
      )
    expect(await canCreate()).toBe(true)

    await admin.patch(`/api/users/${created.body.id}`, { roles: [{ siteId: 1, role: 'operator' }] }).expect(200)
    await eventually(async () => !(await canCreate()), 'instance B sees the new roles')

    await admin.patch(`/api/users/${created.body.id}`, { active: false }).expect(200)
    await eventually(
      async () => (await request(appB).get('/api/sites').set('Cookie', cookie)).status === 401,
      'instance B refuses the deactivated account',
    )
  })

  it('a change on the same instance takes effect on its next request', async () => {
    const admin = await signedIn(appA, 'admin')
    const created = await admin
      .post('/api/users', {
        email: 'quick@fernhollow.example',
        displayName: 'Quinn Quick',
        password: 'correct-horse-battery',
        roles: [{ siteId: 1, role: 'operator' }],
      })
      .expect(201)
    const { agent } = await sessionCookie(appA, 'quick@fernhollow.example', 'correct-horse-battery')
    await agent.get('/api/sites').expect(200)
    await agent.get('/api/sites').expect(200)
    await admin.patch(`/api/users/${created.body.id}`, { active: false }).expect(200)
    await agent.get('/api/sites').expect(401)
  })

  it('the register count follows a new limit on the same instance at once and on the other soon after', async () => {
    const engA = await signedIn(appA, 'engineer')
    const engB = await signedIn(appB, 'engineer')
    const count = async (agent: ApiAgent) =>
      (await agent.get('/api/limits?siteId=1&view=row').expect(200)).body.total as number
    const before = await count(engA)
    expect(await count(engB)).toBe(before)
    expect(await count(engB)).toBe(before)

    await buildHeaterTrip(engA, { siteCode: 'FHR', setpoint: 840 })
    expect(await count(engA)).toBe(before + 1)
    await eventually(async () => (await count(engB)) === before + 1, 'instance B counts the new limit')
  })
})
