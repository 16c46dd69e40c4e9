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
import { until } from './helpers/wait.ts'

// Two app instances on one database, each with its own pool and change feed (docs/architecture.md, "Caches and
// change notifications"): what one instance changes, the other's caches drop.
const ctx = useTestDb()

let appA: Express
let appB: Express
let depsB: AppDeps

/** Waits until `check` holds (another instance hears of a change through PostgreSQL, a moment after commit). */
const eventually = (check: () => Promise<boolean>, what: string) => until(what, check, 15_000, 25)

const PASSWORD = 'correct-horse-battery'

/** Signs in on one app and answers the session cookie, to be sent to the other. */
async function sessionCookie(app: Express, email: string, password = DEMO_PASSWORD) {
  const agent = new ApiAgent(app)
  await agent.signIn(email, password)
  const res = await agent.get('/api/session').expect(200)
  const cookie = (res.request as unknown as { cookies: string }).cookies
  return { agent, cookie }
}

/** An administrator on instance A makes an account with one role at the first site; answers its id. */
async function createAccount(admin: ApiAgent, email: string, displayName: string, role: string): Promise<number> {
  const res = await admin
    .post('/api/users', { email, displayName, password: PASSWORD, roles: [{ siteId: 1, role }] })
    .expect(201)
  return res.body.id as number
}

/** Answers once instance B refuses the session cookie (401): it heard of the change that ended the session. */
const refusedOnB = (cookie: string, what: string) =>
  eventually(async () => (await request(appB).get('/api/sites').set('Cookie', cookie)).status === 401, what)

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
    const id = await createAccount(admin, 'mover@fernhollow.example', 'Mina Mover', 'safety_engineer')
    const { cookie } = await sessionCookie(appB, 'mover@fernhollow.example', PASSWORD)
    const canCreate = async () =>
      (await request(appB).get('/api/session').set('Cookie', cookie).expect(200)).body.user.roles.some(
        (r: { role: string }) => r.role === 'safety_engineer',
      )
    expect(await canCreate()).toBe(true)

    await admin.patch(`/api/users/${id}`, { roles: [{ siteId: 1, role: 'operator' }] }).expect(200)
    await eventually(async () => !(await canCreate()), 'instance B sees the new roles')

    await admin.patch(`/api/users/${id}`, { active: false }).expect(200)
    await refusedOnB(cookie, 'instance B refuses the deactivated account')
  })

  it('a change on the same instance takes effect on its next request', async () => {
    const admin = await signedIn(appA, 'admin')
    const id = await createAccount(admin, 'quick@fernhollow.example', 'Quinn Quick', 'operator')
    const { agent } = await sessionCookie(appA, 'quick@fernhollow.example', PASSWORD)
    await agent.get('/api/sites').expect(200)
    await agent.get('/api/sites').expect(200)
    await admin.patch(`/api/users/${id}`, { active: false }).expect(200)
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

  it('a password changed on one instance ends the other sessions of the account on the other', async () => {
    await createAccount(await signedIn(appA, 'admin'), 'changer@fernhollow.example', 'Cam Changer', 'operator')
    const onB = await sessionCookie(appB, 'changer@fernhollow.example', PASSWORD)
    // served twice on B, so the session and the account are in B's caches
    await request(appB).get('/api/sites').set('Cookie', onB.cookie).expect(200)
    await request(appB).get('/api/sites').set('Cookie', onB.cookie).expect(200)
    const onA = await sessionCookie(appA, 'changer@fernhollow.example', PASSWORD)
    await onA.agent
      .post('/api/account/password', { currentPassword: PASSWORD, newPassword: 'staple-lantern-orbit-42' })
      .expect(204)
    await refusedOnB(onB.cookie, 'instance B refuses the session the password change ended')
    // the session that changed the password goes on
    await onA.agent.get('/api/sites').expect(200)
  })

  it('a password reset by an administrator on one instance ends the sessions on the other', async () => {
    const admin = await signedIn(appA, 'admin')
    const id = await createAccount(admin, 'reset@fernhollow.example', 'Rae Reset', 'operator')
    const { cookie } = await sessionCookie(appB, 'reset@fernhollow.example', PASSWORD)
    await request(appB).get('/api/sites').set('Cookie', cookie).expect(200)
    await admin.patch(`/api/users/${id}`, { password: 'quartz-meadow-bridge-7' }).expect(200)
    await refusedOnB(cookie, 'instance B refuses the session the reset ended')
  })

  it('a register page kept by each instance follows a changed limit: at once here, soon after there', async () => {
    const engA = await signedIn(appA, 'engineer')
    const engB = await signedIn(appB, 'engineer')
    const { limit } = await buildHeaterTrip(engA, { siteCode: 'FHR', setpoint: 820 })
    const url = `/api/limits?siteId=1&view=row&q=${encodeURIComponent(limit.tag)}`
    const setpointOn = async (agent: ApiAgent) =>
      ((await agent.get(url).expect(200)).body.items as { setpoint: number }[]).map((r) => r.setpoint)
    // asked twice on each instance: the second answer comes from its cache
    for (const agent of [engA, engB, engA, engB]) expect(await setpointOn(agent)).toEqual([820])

    await engA.patch(`/api/limits/${limit.id}`, { setpoint: 815 }).expect(200)
    expect(await setpointOn(engA)).toEqual([815])
    await eventually(async () => (await setpointOn(engB)).join() === '815', 'instance B shows the new setpoint')
  })

  it('a kept register page is sent compressed as the client accepts, with an ETag that answers 304', async () => {
    const eng = await signedIn(appA, 'engineer')
    const url = '/api/limits?siteId=1&view=row&pageSize=5'
    await buildHeaterTrip(eng, { siteCode: 'FHR', setpoint: 830 })
    const plain = await eng.get(url).set('Accept-Encoding', 'identity').expect(200)
    expect(plain.headers['content-encoding']).toBeUndefined()
    for (const encoding of ['gzip', 'br']) {
      const res = await eng.get(url).set('Accept-Encoding', encoding).expect(200)
      expect(res.headers['content-encoding']).toBe(encoding)
      expect(res.headers.vary).toMatch(/Accept-Encoding/i)
      // supertest inflates both: the same page as the uncompressed answer
      expect(res.body).toEqual(plain.body)
      expect(res.headers.etag).toBe(plain.headers.etag)
    }
    const again = await eng.get(url).set('If-None-Match', plain.headers.etag).set('Accept-Encoding', 'gzip')
    expect(again.status).toBe(304)
  })

  it('while the listening connection is lost, no instance serves what it kept', async () => {
    const engA = await signedIn(appA, 'engineer')
    const engB = await signedIn(appB, 'engineer')
    const { limit } = await buildHeaterTrip(engA, { siteCode: 'FHR', setpoint: 850 })
    const url = `/api/limits?siteId=1&view=row&q=${encodeURIComponent(limit.tag)}`
    const setpointOnB = async () =>
      ((await engB.get(url).expect(200)).body.items as { setpoint: number }[]).map((r) => r.setpoint).join()
    expect(await setpointOnB()).toBe('850')
    expect(await setpointOnB()).toBe('850')
    const feedA = changeFeedOf(ctx.pool)!
    const feedB = changeFeedOf(depsB.pool)!
    // both instances lose their listening connection (the runtime role may end its own backends)
    const { rows } = await ctx.pool.query(
      `SELECT pg_terminate_backend(pid) AS ended FROM pg_stat_activity
       WHERE datname = current_database() AND query = 'LISTEN limitkeeper_change'`,
    )
    expect(rows.length).toBe(2)
    await eventually(async () => !feedA.live && !feedB.live, 'both instances notice the lost connection')
    // A's change cannot be announced to B now, so B must read PostgreSQL: its next page shows it at once
    await engA.patch(`/api/limits/${limit.id}`, { setpoint: 845 }).expect(200)
    expect(await setpointOnB()).toBe('845')
    expect(await feedA.ready()).toBe(true)
    expect(await feedB.ready()).toBe(true)
  })
})
