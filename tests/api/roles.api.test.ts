import { beforeAll, describe, expect, it } from 'vitest'
import type { Express } from 'express'
import { createApp } from '../../server/app.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { countActionEvents, countRows } from './helpers/factories.ts'

const ctx = useTestDb()

// One demo account per role (server/seed/demo.ts); supervisor and operator hold their role at FHR only.
const WHO = ['admin', 'engineer', 'approver', 'supervisor', 'technician', 'operator', 'manager', 'auditor'] as const
type Who = (typeof WHO)[number]

interface Ids {
  fhr: number
  smp: number
  target: number
  self: number
}
interface Call {
  name: string
  method: 'get' | 'post' | 'patch'
  path: (ids: Ids) => string
  body?: (ids: Ids, n: number) => unknown
  allowed: readonly Who[]
  ok: number
}

let n = 0
const unique = () => ++n

// docs/security.md, "Authorization": admins manage sites, areas and users; the audit trail is for admin, plant manager
// and auditor;
// the mail outbox for admins. Every signed-in user reads their own account.
const CALLS: Call[] = [
  { name: 'list users', method: 'get', path: () => '/api/users', allowed: ['admin'], ok: 200 },
  { name: 'read another user', method: 'get', path: (i) => `/api/users/${i.target}`, allowed: ['admin'], ok: 200 },
  { name: 'read own account', method: 'get', path: (i) => `/api/users/${i.self}`, allowed: WHO, ok: 200 },
  {
    name: 'create a user',
    method: 'post',
    path: () => '/api/users',
    allowed: ['admin'],
    ok: 201,
    body: (i, k) => ({
      email: `new-${k}@fernhollow.example`,
      displayName: `New Person ${k}`,
      password: 'a-long-enough-password',
      roles: [{ siteId: i.fhr, role: 'operator' }],
    }),
  },
  {
    name: 'rename a user',
    method: 'patch',
    path: (i) => `/api/users/${i.target}`,
    allowed: ['admin'],
    ok: 200,
    body: (_i, k) => ({ displayName: `Ines Harrowgate ${k}` }),
  },
  {
    name: 'rename oneself',
    method: 'patch',
    path: (i) => `/api/users/${i.self}`,
    allowed: ['admin'],
    ok: 200,
    body: () => ({ displayName: 'Renamed Self' }),
  },
  {
    name: "set a user's active flag",
    method: 'patch',
    path: (i) => `/api/users/${i.target}`,
    allowed: ['admin'],
    ok: 200,
    body: () => ({ active: true }),
  },
  {
    name: 'assign roles to a user',
    method: 'patch',
    path: (i) => `/api/users/${i.target}`,
    allowed: ['admin'],
    ok: 200,
    body: (i) => ({
      roles: [
        { siteId: i.fhr, role: 'approver' },
        { siteId: i.smp, role: 'approver' },
      ],
    }),
  },
  {
    name: 'create a site',
    method: 'post',
    path: () => '/api/sites',
    allowed: ['admin'],
    ok: 201,
    body: (_i, k) => ({ code: `NEW-${k}`, name: `New Works ${k}`, timeZone: 'Europe/Vienna' }),
  },
  {
    name: 'update a site',
    method: 'patch',
    path: (i) => `/api/sites/${i.fhr}`,
    allowed: ['admin'],
    ok: 200,
    body: () => ({ policy: { testGraceMaxDays: 20 } }),
  },
  {
    name: 'create an area',
    method: 'post',
    path: () => '/api/areas',
    allowed: ['admin'],
    ok: 201,
    body: (i, k) => ({ siteId: i.smp, name: `Loading Bay ${k}` }),
  },
  {
    name: 'read the audit trail',
    method: 'get',
    path: () => '/api/audit-events',
    allowed: ['admin', 'manager', 'auditor'],
    ok: 200,
  },
  { name: 'read the mail outbox', method: 'get', path: () => '/api/mail', allowed: ['admin'], ok: 200 },
  { name: 'list sites', method: 'get', path: () => '/api/sites', allowed: WHO, ok: 200 },
]

/** Row counts that a forbidden call must leave alone; sign-in/out events are not counted (they are not the call's). */
async function snapshot() {
  const count = async (t: 'app_user' | 'site' | 'area' | 'role_assignment' | 'mail_outbox') => countRows(ctx.db, t)
  const audit = await countActionEvents(ctx.db)
  const users = await ctx.db
    .selectFrom('app_user')
    .select(['id', 'display_name', 'active', 'updated_at'])
    .orderBy('id')
    .execute()
  const sites = await ctx.db.selectFrom('site').select(['id', 'name', 'policy']).orderBy('id').execute()
  const roles = await ctx.db
    .selectFrom('role_assignment')
    .selectAll()
    .orderBy('user_id')
    .orderBy('site_id')
    .orderBy('role')
    .execute()
  return {
    counts: {
      app_user: await count('app_user'),
      site: await count('site'),
      area: await count('area'),
      role_assignment: await count('role_assignment'),
      mail_outbox: await count('mail_outbox'),
      audit,
    },
    rows: { users, sites, roles },
  }
}

function send(a: ApiAgent, call: Call, ids: Ids) {
  const path = call.path(ids)
  const body = call.body?.(ids, unique())
  return call.method === 'get' ? a.get(path) : call.method === 'post' ? a.post(path, body) : a.patch(path, body)
}

let app: Express
const agents = {} as Record<Who, ApiAgent>
const selfIds = {} as Record<Who, number>
let fhr = 0
let smp = 0
let target = 0

beforeAll(async () => {
  app = createApp(ctx)
  for (const who of WHO) {
    agents[who] = await signedIn(app, who)
    selfIds[who] = (await agents[who].get('/api/session').expect(200)).body.user.id
  }
  const sites = await ctx.db.selectFrom('site').select(['id', 'code']).execute()
  fhr = sites.find((s) => s.code === 'FHR')!.id
  smp = sites.find((s) => s.code === 'SMP')!.id
  target = (
    await ctx.db
      .selectFrom('app_user')
      .select('id')
      .where('email', '=', 'approver2@fernhollow.example')
      .executeTakeFirstOrThrow()
  ).id
})

const cases = CALLS.flatMap((call) => WHO.map((who) => ({ call, who, allowed: call.allowed.includes(who) })))

describe("each role's foundation calls (docs/security.md, Authorization)", () => {
  it.each(cases.filter((c) => !c.allowed).map((c) => [c.who, c.call.name, c] as const))(
    '%s may not %s: 403 and nothing written',
    async (_who, _name, { call, who }) => {
      const before = await snapshot()
      const res = await send(agents[who], call, { fhr, smp, target, self: selfIds[who] })
      expect(res.status).toBe(403)
      expect(res.body.error.code).toBe('FORBIDDEN')
      expect(await snapshot()).toEqual(before)
    },
  )

  it.each(cases.filter((c) => c.allowed).map((c) => [c.who, c.call.name, c] as const))(
    '%s may %s',
    async (_who, _name, { call, who }) => {
      const before = await snapshot()
      const res = await send(agents[who], call, { fhr, smp, target, self: selfIds[who] })
      expect(res.status, JSON.stringify(res.body)).toBe(call.ok)
      const after = await snapshot()
      // a read writes nothing; a change writes exactly one audit event with it
      expect(after.counts.audit - before.counts.audit).toBe(call.method === 'get' ? 0 : 1)
      if (call.method === 'get') expect(after).toEqual(before)
    },
  )

  it.each(CALLS.map((c) => [c.name, c] as const))(
    'anonymous may not %s: 401 and nothing written',
    async (_name, call) => {
      const anon = new ApiAgent(app)
      await anon.refreshCsrf()
      const before = await snapshot()
      const res = await send(anon, call, { fhr, smp, target, self: target })
      expect(res.status).toBe(401)
      expect(res.body.error.code).toBe('UNAUTHENTICATED')
      expect(await snapshot()).toEqual(before)
    },
  )
})

describe('reading an account by id (docs/security.md, Authorization)', () => {
  it.each(WHO.filter((w) => w !== 'admin'))(
    "%s gets the same 403 for another account's id whether it exists or not",
    async (who) => {
      const { max } = await ctx.db
        .selectFrom('app_user')
        .select((eb) => eb.fn.max('id').as('max'))
        .executeTakeFirstOrThrow()
      const unknown = Number(max) + 1000
      const existing = await agents[who].get(`/api/users/${target}`)
      const missing = await agents[who].get(`/api/users/${unknown}`)
      expect(existing.status).toBe(403)
      expect(missing.status).toBe(403)
      expect(missing.body.error).toEqual(existing.body.error)
    },
  )

  it('an administrator gets 404 for an id that does not exist', async () => {
    const { max } = await ctx.db
      .selectFrom('app_user')
      .select((eb) => eb.fn.max('id').as('max'))
      .executeTakeFirstOrThrow()
    const res = await agents.admin.get(`/api/users/${Number(max) + 1000}`)
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('NOT_FOUND')
  })
})

describe('role assignments', () => {
  it("an admin cannot change their own roles (403, nothing written) but can change another's", async () => {
    const admin = agents.admin
    const self = selfIds.admin
    const before = await snapshot()
    const own = await admin.patch(`/api/users/${self}`, {
      roles: [
        { siteId: fhr, role: 'admin' },
        { siteId: fhr, role: 'approver' },
      ],
    })
    expect(own.status).toBe(403)
    expect(own.body.error.code).toBe('FORBIDDEN')
    expect(await snapshot()).toEqual(before)
    // not even a removal
    expect((await admin.patch(`/api/users/${self}`, { roles: [] })).status).toBe(403)
    expect(await snapshot()).toEqual(before)

    const other = await admin.patch(`/api/users/${target}`, { roles: [{ siteId: smp, role: 'auditor' }] }).expect(200)
    expect(other.body.roles).toEqual([{ siteId: smp, role: 'auditor' }])
    const stored = await ctx.db
      .selectFrom('role_assignment')
      .select(['site_id', 'role'])
      .where('user_id', '=', target)
      .execute()
    expect(stored).toEqual([{ site_id: smp, role: 'auditor' }])
    const event = await ctx.db
      .selectFrom('audit_event')
      .selectAll()
      .where('action', '=', 'user.update')
      .where('entity_id', '=', String(target))
      .orderBy('id', 'desc')
      .limit(1)
      .executeTakeFirstOrThrow()
    expect(event.actor_id).toBe(self)
    expect(event.after).toMatchObject({ roles: [{ siteId: smp, role: 'auditor' }] })
  })

  it("a new role takes effect on the holder's next call", async () => {
    const who = new ApiAgent(app)
    await who.signIn('approver2@fernhollow.example')
    await who.get('/api/audit-events').expect(200) // auditor at SMP since the previous test
    await agents.admin.patch(`/api/users/${target}`, { roles: [{ siteId: fhr, role: 'approver' }] }).expect(200)
    expect((await who.get('/api/audit-events')).status).toBe(403)
  })

  it('an admin cannot deactivate their own account', async () => {
    const before = await snapshot()
    const res = await agents.admin.patch(`/api/users/${selfIds.admin}`, { active: false })
    expect(res.status).toBe(403)
    expect(await snapshot()).toEqual(before)
  })

  // Role assignments are (user, site, role) triples: an admin acts only where they hold the admin role
  // (docs/security.md, "Authorization")
  describe('an admin of one site only', () => {
    let local: ApiAgent
    beforeAll(async () => {
      await agents.admin
        .post('/api/users', {
          email: 'fhr-admin@fernhollow.example',
          displayName: 'Frida Localadmin',
          password: 'a-long-enough-password',
          roles: [{ siteId: fhr, role: 'admin' }],
        })
        .expect(201)
      local = new ApiAgent(app)
      await local.signIn('fhr-admin@fernhollow.example', 'a-long-enough-password')
    })

    it('creates areas at that site, not at the other (403, nothing written)', async () => {
      await local.post('/api/areas', { siteId: fhr, name: 'Flare System' }).expect(201)
      const before = await snapshot()
      const res = await local.post('/api/areas', { siteId: smp, name: 'Flare System' })
      expect(res.status).toBe(403)
      expect(await snapshot()).toEqual(before)
    })

    it('updates that site, not the other', async () => {
      await local.patch(`/api/sites/${fhr}`, { name: 'Fernhollow Refinery' }).expect(200)
      const before = await snapshot()
      // a site the admin cannot see answers as a missing one (docs/security.md#authorization)
      expect((await local.patch(`/api/sites/${smp}`, { name: 'Taken Over' })).status).toBe(404)
      expect(await snapshot()).toEqual(before)
    })

    it('cannot grant roles at the other site, to a new user or an existing one (403, nothing written)', async () => {
      const before = await snapshot()
      const create = await local.post('/api/users', {
        email: 'smp-admin-by-fhr@fernhollow.example',
        displayName: 'Sneaky Admin',
        password: 'a-long-enough-password',
        roles: [{ siteId: smp, role: 'admin' }],
      })
      expect(create.status).toBe(403)
      const grant = await local.patch(`/api/users/${target}`, {
        roles: [
          { siteId: fhr, role: 'approver' },
          { siteId: smp, role: 'admin' },
        ],
      })
      expect(grant.status).toBe(403)
      expect(await snapshot()).toEqual(before)
      // at their own site they can
      await local
        .patch(`/api/users/${target}`, {
          roles: [
            { siteId: fhr, role: 'approver' },
            { siteId: fhr, role: 'auditor' },
          ],
        })
        .expect(200)
    })

    it('cannot reset the password of, or deactivate, someone who holds roles at the other site', async () => {
      const smpOnly = await agents.admin
        .post('/api/users', {
          email: 'smp-only@fernhollow.example',
          displayName: 'Sam Saltmarsh',
          password: 'a-long-enough-password',
          roles: [{ siteId: smp, role: 'admin' }],
        })
        .expect(201)
      const before = await snapshot()
      expect((await local.patch(`/api/users/${smpOnly.body.id}`, { password: 'taken-over-password' })).status).toBe(403)
      expect((await local.patch(`/api/users/${smpOnly.body.id}`, { active: false })).status).toBe(403)
      // nor can they strip the other site's roles away
      expect((await local.patch(`/api/users/${smpOnly.body.id}`, { roles: [] })).status).toBe(403)
      // nor re-affirm them unchanged: a no-op role list is refused and not audited
      const same = await local.patch(`/api/users/${smpOnly.body.id}`, { roles: [{ siteId: smp, role: 'admin' }] })
      expect(same.status).toBe(403)
      expect(await snapshot()).toEqual(before)
    })
  })
})
