// The authorization matrix: every state-changing route of the app (read from Express's router stack), called by
// anonymous, and by one account per role at its own site and at the other site, against the expected answers of
// shared/abilities/routes.ts. A route missing from that table fails here, so a new route has to be placed in it.
// "Passes authorization" is any answer but 401 and 403 FORBIDDEN (a 400 for an incomplete body, a 409 for a record's
// state); a refusal writes nothing it would need to undo. Accounts sign in once each: no argon2 per request.
import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createDb } from '../../server/db/index.ts'
import { hashPassword } from '../../server/features/session/passwords.ts'
import { seedDemoActivity } from '../../server/seed/demo-activity.ts'
import { seedDemoReconciliation } from '../../server/seed/demo-reconciliation.ts'
import { seedDemoShiftHandover } from '../../server/seed/demo-shift-handover.ts'
import { ROUTE_ACCESS, type RouteAccess } from '../../shared/abilities/routes.ts'
import { ROLES, type Role } from '../../shared/schemas/users.ts'
import { ApiAgent } from './helpers/agent.ts'
import { CALLS, completeFixtures, type Fixtures, fixturesAt, MISSING, pathOf, PW } from './helpers/route-calls.ts'
import { mutatingRoutes, type AppRoute } from './helpers/routes.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb({ register: true })
let app: Express
let routes: AppRoute[]
const fixtures: { own: Fixtures; other: Fixtures; missing: Fixtures } = {} as never
const agents = new Map<Role, ApiAgent>()
/** an anonymous caller with the CSRF token of its anonymous session, as the sign-in page has one */
let anonymous: ApiAgent

/** One call of the route as `who` (null: anonymous) naming the records of `f`. */
async function call(route: AppRoute, who: Role | null, f: Fixtures) {
  const spec = CALLS[route.key] ?? {}
  const agent = who ? agents.get(who)! : anonymous
  const url = pathOf(route, f)
  if (spec.form) {
    const { fields, file } = spec.form(f)
    return agent.upload(url, fields, file ?? undefined, route.method.toLowerCase() as 'post')
  }
  const body = spec.body?.(f)
  const m = route.method.toLowerCase() as 'post' | 'put' | 'patch' | 'delete'
  return m === 'delete' ? agent.delete(url) : agent[m](url, body)
}

type Answer = { status: number; code: string | undefined }
const answer = (res: { status: number; body: { error?: { code?: string } } }): Answer => ({
  status: res.status,
  code: res.body?.error?.code,
})
/** Refused by authorization: 401, or 403 FORBIDDEN (not a wrong signature password, not a stale CSRF token). */
const refused = (a: Answer) => a.status === 401 || (a.status === 403 && a.code === 'FORBIDDEN')
const passesAt = (access: RouteAccess, role: Role | null) =>
  access.roles === 'anyone' || (role !== null && (access.roles === 'signed-in' || access.roles.includes(role)))

beforeAll(async () => {
  const owner = createDb(ctx.database.ownerUrl, 2).db
  try {
    await seedDemoActivity(owner, ctx.config, ctx.clock)
    await seedDemoShiftHandover(owner, ctx.clock)
    await seedDemoReconciliation(owner, ctx.clock, { port: 1 })
    // one account per role, holding it at Fernhollow only (one argon2 hash for all)
    const hash = await hashPassword(PW)
    const sites = await owner.selectFrom('site').select(['id', 'code']).orderBy('id').execute()
    const fhr = sites.find((s) => s.code === 'FHR')!.id
    const smp = sites.find((s) => s.code === 'SMP')!.id
    const now = ctx.clock.now()
    const userIds: Record<string, number> = {}
    for (const role of ROLES) {
      const { id } = await owner
        .insertInto('app_user')
        .values({
          email: `matrix-${role}@fernhollow.example`,
          display_name: `Matrix ${role}`,
          password_hash: hash,
          created_at: now,
          updated_at: now,
        })
        .returning('id')
        .executeTakeFirstOrThrow()
      await owner.insertInto('role_assignment').values({ user_id: id, site_id: fhr, role }).execute()
      userIds[role] = id
    }
    // a user of each site to rename (operators of one site only)
    const smpOnly = await owner
      .insertInto('app_user')
      .values({
        email: 'matrix-smp@fernhollow.example',
        display_name: 'SMP',
        password_hash: hash,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await owner.insertInto('role_assignment').values({ user_id: smpOnly.id, site_id: smp, role: 'operator' }).execute()
    app = createApp(ctx, { serveClient: false })
    await completeFixtures(ctx.database.ownerUrl, app, fhr, smp, userIds.admin)
    routes = mutatingRoutes(app)
    anonymous = new ApiAgent(app)
    await anonymous.refreshCsrf()
    for (const role of ROLES) {
      const a = new ApiAgent(app)
      await a.signIn(`matrix-${role}@fernhollow.example`, PW)
      agents.set(role, a)
    }
    const absent: string[] = []
    fixtures.own = await fixturesAt(ctx.pool, fhr, userIds.operator, absent)
    fixtures.other = await fixturesAt(ctx.pool, smp, smpOnly.id, absent)
    fixtures.missing = Object.fromEntries(Object.keys(fixtures.other).map((k) => [k, MISSING])) as never
    fixtures.missing.siteId = smp
    if (absent.length) throw new Error(`the matrix needs: ${absent.join(', ')}`)
  } finally {
    await owner.destroy()
  }
}, 300_000)

describe('authorization matrix', () => {
  it('lists every mutating route of the app in the table, and nothing the app does not have', () => {
    const keys = routes.map((r) => r.key)
    expect(keys.length).toBeGreaterThan(50)
    expect(keys.filter((k) => !(k in ROUTE_ACCESS))).toEqual([])
    expect(Object.keys(ROUTE_ACCESS).filter((k) => !keys.includes(k))).toEqual([])
    expect(keys.filter((k) => !(k in CALLS))).toEqual([])
  })

  it('answers every route × role at its own site, at the other site, and anonymous as the table says', async () => {
    const wrong: string[] = []
    const check = (route: AppRoute, who: string, got: Answer, ok: boolean, expected: string) => {
      if (got.status >= 500 || !ok)
        wrong.push(`${route.key} as ${who}: got ${got.status} ${got.code ?? ''}, expected ${expected}`)
    }
    // signing out last; refusals first for every route (they write nothing), then the calls that pass
    const ordered = [...routes].sort(
      (a, b) => Number(a.key === 'DELETE /api/session') - Number(b.key === 'DELETE /api/session'),
    )
    for (const route of ordered) {
      const access = ROUTE_ACCESS[route.key]
      const anon = answer(await call(route, null, fixtures.own))
      check(
        route,
        'anonymous',
        anon,
        passesAt(access, null) ? !refused(anon) : anon.status === 401,
        passesAt(access, null) ? 'to pass' : '401',
      )
      for (const role of ROLES) {
        if (route.key === 'DELETE /api/session') continue
        const other = answer(await call(route, role, fixtures.other))
        if (access.otherSite === 'missing') {
          const missing = answer(await call(route, role, fixtures.missing))
          check(
            route,
            `${role} at the other site`,
            other,
            other.status === missing.status && other.code === missing.code,
            `as for a missing id (${missing.status} ${missing.code ?? ''})`,
          )
          // a role that may do this nowhere is refused before any record is looked up: 403 for both, nothing told
          if (missing.status === 403 && passesAt(access, role))
            wrong.push(`${route.key} as ${role}: a missing id answers 403`)
        } else if (access.otherSite === 403) {
          check(route, `${role} at the other site`, other, other.status === 403 && other.code === 'FORBIDDEN', '403')
        } else if (!passesAt(access, role)) {
          check(route, `${role} at the other site`, other, other.status === 403, '403')
        }
        if (!passesAt(access, role)) {
          const own = answer(await call(route, role, fixtures.own))
          check(route, `${role} at its own site`, own, own.status === 403 && own.code === 'FORBIDDEN', '403')
        }
      }
    }
    for (const route of ordered) {
      const access = ROUTE_ACCESS[route.key]
      for (const role of ROLES) {
        if (!passesAt(access, role) || access.roles === 'anyone') continue
        const own = answer(await call(route, role, fixtures.own))
        check(route, `${role} at its own site`, own, !refused(own), 'to pass authorization')
      }
    }
    expect(wrong).toEqual([])
  }, 600_000)
})
