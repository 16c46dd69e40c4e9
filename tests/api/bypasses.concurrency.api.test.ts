import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { buildHeaterTrip, ACTIVATE, countActionEvents } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor', 'operator'] as const

const { as } = useSignedIn(ctx, PEOPLE, { at: '2026-05-11T06:00:00Z' })
let limit: { id: number; siteId: number }

const authorized = async (reason: string) => {
  const b = await as.operator.created('/api/bypasses', {
    limitId: limit.id,
    reason,
    plannedStart: '2026-05-11T06:00:00Z',
    plannedEnd: '2026-05-11T12:00:00Z',
    predefinedMeasuresConfirmed: true,
  })
  await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
  return b.id as number
}
const activeRows = () =>
  ctx.db.selectFrom('bypass').select(['id']).where('limit_id', '=', limit.id).where('status', '=', 'active').execute()
const statusOf = async (id: number) =>
  (await ctx.db.selectFrom('bypass').select('status').where('id', '=', id).executeTakeFirstOrThrow()).status

beforeAll(async () => {
  limit = (await buildHeaterTrip(as.engineer)).limit
  await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, limit)
})

describe('bypass: one active bypass per limit (docs/bypasses.md, a partial unique index)', () => {
  it('two authorized bypasses activated at the same moment: exactly one 200 and one 409', async () => {
    // a few rounds, so the race is not won by chance in one order only
    for (let round = 0; round < 3; round++) {
      const [a, b] = [await authorized(`Round ${round} A`), await authorized(`Round ${round} B`)]
      const results = await Promise.all([
        as.supervisor.post(`/api/bypasses/${a}/activation`, ACTIVATE),
        as.operator.post(`/api/bypasses/${b}/activation`, ACTIVATE),
      ])
      expect(results.map((r) => r.status).sort(), JSON.stringify(results.map((r) => r.body))).toEqual([200, 409])
      const loser = results.find((r) => r.status === 409)!
      expect(loser.body.error.code).toBe('CONFLICT')
      expect(loser.body.error.message).toContain('active')
      const winner = results.find((r) => r.status === 200)!.body
      expect(await activeRows()).toEqual([{ id: winner.id }])
      expect(await statusOf(winner.id === a ? b : a)).toBe('authorized')
      const activations = await ctx.db
        .selectFrom('audit_event')
        .select('entity_id')
        .where('action', '=', 'bypass.activate')
        .where('entity_id', 'in', [String(a), String(b)])
        .execute()
      expect(activations).toEqual([{ entity_id: String(winner.id) }])
      expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('bypassed')

      await as.operator
        .post(`/api/bypasses/${winner.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
        .expect(200)
      await as.operator.post(`/api/bypasses/${winner.id === a ? b : a}/cancellation`).expect(200)
    }
  })

  it('the database refuses a second active row even when the service check is skipped (23505)', async () => {
    const first = await authorized('Held active while the owner role writes directly')
    await as.operator.post(`/api/bypasses/${first}/activation`, ACTIVATE).expect(200)
    const requester = await ctx.db
      .selectFrom('app_user')
      .select('id')
      .where('email', '=', 'operator@fernhollow.example')
      .executeTakeFirstOrThrow()
    const client = new pg.Client({ connectionString: ctx.database.ownerUrl })
    await client.connect()
    try {
      await client.query('BEGIN')
      const insert = (status: string) =>
        client.query(
          `INSERT INTO bypass (limit_id, site_id, requested_by, reason, planned_start, planned_end, status, created_at, updated_at)
         VALUES ($1, $2, $3, 'direct insert', now(), now() + interval '1 hour', $4, now(), now())`,
          [limit.id, limit.siteId, requester.id, status],
        )
      // the index is partial: a removed row of the same limit is fine
      await insert('removed')
      const err = await insert('active').then(
        () => null,
        (e: { code?: string; constraint?: string }) => e,
      )
      expect(err).toMatchObject({ code: '23505', constraint: 'bypass_one_active_per_limit' })
    } finally {
      await client.query('ROLLBACK')
      await client.end()
    }
    expect(await activeRows()).toEqual([{ id: first }])
    await as.operator
      .post(`/api/bypasses/${first}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
  })
})

describe('bypass: removal on record (IEC 61511-1 16.2 bypasses logged; removing while the trip condition is present would trip the unit)', () => {
  it('refuses a removal without the clear-value and back-in-service confirmations (400 field errors, still active, nothing written)', async () => {
    const id = await authorized('Removal confirmations')
    await as.operator.post(`/api/bypasses/${id}/activation`, ACTIVATE).expect(200)
    const snapshot = async () => ({
      row: await ctx.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirstOrThrow(),
      audit: await countActionEvents(ctx.db),
    })
    const before = await snapshot()
    const cases: [Record<string, unknown>, string][] = [
      [{}, 'pvClearConfirmed'],
      [{ pvClearConfirmed: false, protectionRestoredConfirmed: true }, 'pvClearConfirmed'],
      [{ pvClearConfirmed: 'yes', protectionRestoredConfirmed: true }, 'pvClearConfirmed'],
      [{ pvClearConfirmed: true }, 'protectionRestoredConfirmed'],
      [{ pvClearConfirmed: true, protectionRestoredConfirmed: false }, 'protectionRestoredConfirmed'],
    ]
    for (const [body, field] of cases) {
      const res = await as.operator.post(`/api/bypasses/${id}/removal`, body).expect(400)
      expect(res.body.error.code, JSON.stringify(body)).toBe('VALIDATION_FAILED')
      expect(res.body.error.details.fields[field], JSON.stringify(body)).toBeDefined()
    }
    expect(await snapshot()).toEqual(before)
    const still = (await as.operator.get(`/api/bypasses/${id}`).expect(200)).body
    expect(still).toMatchObject({ status: 'active', removedAt: null, pvClearConfirmed: null })
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('bypassed')

    const removed = (
      await as.operator
        .post(`/api/bypasses/${id}/removal`, {
          pvClearConfirmed: true,
          protectionRestoredConfirmed: true,
          note: 'TI 640 °C, 140 K below the trip',
        })
        .expect(200)
    ).body
    expect(removed).toMatchObject({
      status: 'removed',
      removedBy: 'Olive Tanager',
      pvClearConfirmed: true,
      removalNote: 'TI 640 °C, 140 K below the trip',
    })
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('in_service')
    const event = await ctx.db
      .selectFrom('audit_event')
      .select(['actor_id', 'after'])
      .where('action', '=', 'bypass.remove')
      .where('entity_id', '=', String(id))
      .executeTakeFirstOrThrow()
    expect(event.after).toMatchObject({ pvClearConfirmed: true, protectionRestoredConfirmed: true })
  })

  it('only an active bypass is removed: 409 INVALID_STATE otherwise', async () => {
    const clear = { pvClearConfirmed: true, protectionRestoredConfirmed: true }
    const requested = (
      await as.operator.created('/api/bypasses', {
        limitId: limit.id,
        reason: 'Not yet authorized',
        plannedStart: '2026-05-11T06:00:00Z',
        plannedEnd: '2026-05-11T12:00:00Z',
        predefinedMeasuresConfirmed: true,
      })
    ).id as number
    const auth = await authorized('Authorized, not active')
    const done = await authorized('Removed already')
    await as.operator.post(`/api/bypasses/${done}/activation`, ACTIVATE).expect(200)
    await as.operator.post(`/api/bypasses/${done}/removal`, clear).expect(200)
    for (const id of [requested, auth, done]) {
      const before = await ctx.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirstOrThrow()
      const res = await as.operator.post(`/api/bypasses/${id}/removal`, clear).expect(409)
      expect(res.body.error.code).toBe('INVALID_STATE')
      expect(await ctx.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirstOrThrow()).toEqual(
        before,
      )
    }
    await as.operator.post('/api/bypasses/999999/removal', clear).expect(404)
  })
})
