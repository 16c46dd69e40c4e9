import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { auditActions, buildActiveHeaterTrip, carryOutChange } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = 'limitkeeper-demo'

async function crew() {
  const app = createApp(ctx)
  const [eng, approver, approver2, tech, op, sup, mgr, admin] = await Promise.all(
    ['engineer', 'approver', 'approver2', 'technician', 'operator', 'supervisor', 'manager', 'admin'].map((w) =>
      signedIn(app, w),
    ),
  )
  // the people a change request passes through, for the limits the demands are recorded on
  const changeCrew = { eng, approvers: [approver, approver2], tech }
  return { app, eng, approver, approver2, tech, op, sup, mgr, admin, changeCrew }
}

const demandCount = async () =>
  Number(
    (
      await ctx.db
        .selectFrom('demand')
        .select((eb) => eb.fn.countAll<string>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )

describe('demand and trip log', () => {
  it('operators record, engineers classify and credit with a signature where the site policy allows', async () => {
    ctx.clock.set('2026-06-01T08:00:00Z')
    const c = await crew()
    const { limit, site } = await buildActiveHeaterTrip(c.changeCrew, { sil: 2 })

    // the operator records a real demand on which the whole function acted
    const demand = await c.op.created('/api/demands', {
      limitId: limit.id,
      kind: 'real_demand',
      outcome: 'acted',
      occurredAt: '2026-05-30T22:15:00Z',
      description: 'Fuel gas pressure surge drove the outlet to the trip; burners shut, valves closed',
      evidence: 'Sequence-of-events printout attached to the shift log',
      workOrder: 'WO-1001',
      wholeFunction: true,
    })
    expect(demand).toMatchObject({ kind: 'real_demand', outcome: 'acted', status: 'recorded', creditedAsTest: false })
    expect(demand.actions.classify).toMatchObject({ allowed: false, status: 403 })

    // the technician may not record; nor may anyone record an event in the future
    await c.tech
      .post('/api/demands', {
        limitId: limit.id,
        kind: 'spurious_trip',
        cause: 'x',
        occurredAt: '2026-05-30T22:15:00Z',
        description: 'x',
      })
      .expect(403)
    await c.op
      .post('/api/demands', {
        limitId: limit.id,
        kind: 'spurious_trip',
        cause: 'Loose terminal',
        occurredAt: '2026-06-02T00:00:00Z',
        description: 'Tripped',
      })
      .expect(422)
    // a spurious trip needs its cause; a real demand its outcome
    const noCause = await c.sup
      .post('/api/demands', {
        limitId: limit.id,
        kind: 'spurious_trip',
        occurredAt: '2026-05-01T00:00:00Z',
        description: 'Tripped',
      })
      .expect(400)
    expect(noCause.body.error.details.fields.cause).toBeDefined()
    await c.sup
      .post('/api/demands', {
        limitId: limit.id,
        kind: 'real_demand',
        occurredAt: '2026-05-01T00:00:00Z',
        description: 'Trip',
      })
      .expect(422)
    expect(await demandCount()).toBe(1)

    // the engineer sees the actions; credit is refused before classification and while the policy forbids it
    const seen = (await c.eng.get(`/api/demands/${demand.id}`).expect(200)).body
    expect(seen.actions.classify).toEqual({ allowed: true })
    expect(seen.actions.credit).toMatchObject({ allowed: false, status: 409 })
    expect(seen.actions.credit.reason).toMatch(/site policy/)

    await c.op
      .post(`/api/demands/${demand.id}/classification`, { counts: true, note: 'Genuine process demand' })
      .expect(403)
    const classified = (
      await c.eng
        .post(`/api/demands/${demand.id}/classification`, { counts: true, note: 'Genuine process demand' })
        .expect(200)
    ).body
    expect(classified).toMatchObject({ status: 'classified', counts: true, classifiedBy: expect.any(String) })
    await c.eng.post(`/api/demands/${demand.id}/classification`, { counts: false, note: 'again' }).expect(409)

    const refused = await c.eng
      .post(`/api/demands/${demand.id}/credit`, { password: PW, coveredWhatTheTestCovers: true, note: 'Full trip' })
      .expect(409)
    expect(refused.body.error.message).toMatch(/site policy/)

    await c.admin.patch(`/api/sites/${site.id}`, { policy: { demandCreditAllowed: true } }).expect(200)
    await c.eng
      .post(`/api/demands/${demand.id}/credit`, {
        password: 'wrong-password',
        coveredWhatTheTestCovers: true,
        note: 'Full trip',
      })
      .expect(403)
    expect((await c.eng.get(`/api/demands/${demand.id}`).expect(200)).body.creditedAsTest).toBe(false)
    const credited = (
      await c.eng
        .post(`/api/demands/${demand.id}/credit`, {
          password: PW,
          coveredWhatTheTestCovers: true,
          note: 'SOE shows TT, logic and both valves; valve closing times from the DCS trend',
        })
        .expect(200)
    ).body
    expect(credited).toMatchObject({ creditedAsTest: true, creditedBy: expect.any(String) })
    // the credited demand counts as a passing full test: never tested before, now due one interval (12 months) after
    // the demand's calendar day in the site's zone (22:15 UTC on 30 May is 00:15 on 31 May in Europe/Berlin); the
    // due date is the test day plus the interval in calendar months (docs/domain/due-dates.md)
    expect(limit.testStatus).toBe('never_tested')
    const after = (await c.eng.get(`/api/limits/${limit.id}`).expect(200)).body
    expect(after).toMatchObject({ testStatus: 'ok', lastFullPass: '2026-05-31', testDueDate: '2027-05-31' })
    expect(credited.actions.credit.reason).toMatch(/already credited/)
    await c.eng
      .post(`/api/demands/${demand.id}/credit`, { password: PW, coveredWhatTheTestCovers: true, note: 'x' })
      .expect(409)

    const signatures = await ctx.db
      .selectFrom('signature')
      .selectAll()
      .where('entity_type', '=', 'Demand')
      .where('entity_id', '=', demand.id)
      .execute()
    expect(signatures).toHaveLength(1)
    const audit = await auditActions(ctx.db, 'Demand')
    // the refused signature is on record too (its own audit action), between classification and credit
    expect(audit).toHaveLength(4)
    expect(audit.filter((a) => a.startsWith('demand.'))).toEqual([
      'demand.record',
      'demand.classify',
      'demand.credit_as_test',
    ])
  })

  it('refuses to credit a demand that failed or did not exercise the whole function', async () => {
    ctx.clock.set('2026-06-01T08:00:00Z')
    const c = await crew()
    const { limit, site } = await buildActiveHeaterTrip(c.changeCrew, { sil: 1 })
    await c.admin.patch(`/api/sites/${site.id}`, { policy: { demandCreditAllowed: true } }).expect(200)
    const partial = await c.sup.created('/api/demands', {
      limitId: limit.id,
      kind: 'real_demand',
      outcome: 'acted',
      occurredAt: '2026-05-20T10:00:00Z',
      description: 'Trip acted; only one valve was seen to close',
      wholeFunction: false,
    })
    const failed = await c.sup.created('/api/demands', {
      limitId: limit.id,
      kind: 'real_demand',
      outcome: 'failed_to_act',
      occurredAt: '2026-05-21T10:00:00Z',
      description: 'Process reached the trip and the burners stayed lit; operator tripped by hand',
      wholeFunction: true,
    })
    for (const d of [partial, failed]) {
      await c.eng.post(`/api/demands/${d.id}/classification`, { counts: true, note: 'Genuine' }).expect(200)
      const r = await c.eng
        .post(`/api/demands/${d.id}/credit`, { password: PW, coveredWhatTheTestCovers: true, note: 'x' })
        .expect(409)
      expect(r.body.error.message).toMatch(/whole function|acted/)
    }
    // without the confirmation the credit is a bad request
    await c.eng.post(`/api/demands/${partial.id}/credit`, { password: PW, note: 'x' }).expect(400)
  })

  it('lists with paging and filters by site, limit, kind and period', async () => {
    ctx.clock.set('2026-06-01T08:00:00Z')
    const c = await crew()
    const { limit } = await buildActiveHeaterTrip(c.changeCrew)
    const kinds = ['spurious_trip', 'spurious_trip', 'dangerous_failure', 'failure_on_demand'] as const
    for (const [i, kind] of kinds.entries()) {
      await c.sup
        .post('/api/demands', {
          limitId: limit.id,
          kind,
          cause: kind === 'spurious_trip' ? 'Thermocouple lead broke' : '',
          occurredAt: `2026-0${i + 2}-10T10:00:00Z`,
          description: `Event ${i}`,
        })
        .expect(201)
    }
    const all = (await c.eng.get(`/api/demands?limitId=${limit.id}&pageSize=2`).expect(200)).body
    expect(all.total).toBe(4)
    expect(all.items).toHaveLength(2)
    expect(all.items[0].occurredAt).toBe('2026-05-10T10:00:00.000Z')
    const page2 = (await c.eng.get(`/api/demands?limitId=${limit.id}&pageSize=2&page=2`).expect(200)).body
    expect(page2.items.map((d: { description: string }) => d.description)).toEqual(['Event 1', 'Event 0'])
    const spurious = (await c.eng.get(`/api/demands?limitId=${limit.id}&kind=spurious_trip`).expect(200)).body
    expect(spurious.total).toBe(2)
    const period = (
      await c.eng.get(`/api/demands?limitId=${limit.id}&from=2026-03-01T00:00:00Z&to=2026-05-01T00:00:00Z`).expect(200)
    ).body
    expect(period.items.map((d: { description: string }) => d.description)).toEqual(['Event 2', 'Event 1'])
    // the operator holds roles at FHR only: asking for SMP gives nothing
    const sites = (await c.eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
    const smp = sites.find((s) => s.code === 'SMP')!
    expect((await c.op.get(`/api/demands?siteId=${smp.id}`).expect(200)).body.total).toBe(0)
    await c.eng.get('/api/demands?kind=earthquake').expect(400)
    await c.eng.get('/api/demands?pageSize=500').expect(400)
  })

  it('compares observed demand and spurious-trip rates with the assumed ones, from commissioning', async () => {
    ctx.clock.set('2026-06-01T00:00:00Z')
    const c = await crew()
    const { limit } = await buildActiveHeaterTrip(c.changeCrew, { sil: 2 })
    /** The hazard study's rates of the limit, sent by `agent`: `demandRate` (0.1) demands and 0.5 spurious trips a year. */
    const assume = (agent: ApiAgent, commissionedAt: string, reason: string, demandRate: number | null = 0.1) =>
      agent.put(`/api/demands/assumptions/${limit.id}`, {
        assumedDemandRatePerYear: demandRate,
        assumedSpuriousRatePerYear: 0.5,
        commissionedAt,
        reason,
      })
    await assume(c.op, '2025-06-01', 'HAZOP').expect(403)
    await assume(c.eng, '2027-01-01', 'HAZOP').expect(400)
    // the limit row was entered today; commissioning a year ago is what the rate counts from
    await assume(c.eng, '2025-06-01', 'LOPA study LS-12 rev 2; validation record VR-7').expect(200)
    for (const [kind, at] of [
      ['real_demand', '2025-09-01T00:00:00Z'],
      ['spurious_trip', '2025-10-01T00:00:00Z'],
    ] as const) {
      await c.sup
        .post('/api/demands', {
          limitId: limit.id,
          kind,
          outcome: kind === 'real_demand' ? 'acted' : undefined,
          cause: kind === 'spurious_trip' ? 'Power dip' : '',
          occurredAt: at,
          description: kind,
        })
        .expect(201)
    }
    const rates = (await c.eng.get('/api/demands/rates').expect(200)).body
    const row = rates.limits.find((r: { limitId: number }) => r.limitId === limit.id)
    // one year observed (2025-06-01 … 2026-06-01 is 365 days): 1 demand and 1 spurious trip per year
    expect(row.observedYears).toBeCloseTo(1, 6)
    expect(row).toMatchObject({
      demands: 1,
      spuriousTrips: 1,
      assumedDemandRatePerYear: 0.1,
      demandRateAboveAssumed: true,
      spuriousRateAboveAssumed: true,
    })
    expect(row.observedDemandRatePerYear).toBeCloseTo(1, 6)
    expect(rates.sites.some((s: { demandRateAboveAssumed: boolean }) => s.demandRateAboveAssumed)).toBe(true)
    expect(rates.note).toMatch(/Low demand mode only/)
    // the limit page asks for its own row: the hazard study's figures and the commissioning date come back
    const own = (await c.eng.get('/api/demands/rates').query({ limitId: limit.id }).expect(200)).body
    expect(own.limits).toHaveLength(1)
    expect(own.limits[0]).toMatchObject({
      limitId: limit.id,
      sil: 2,
      commissionedAt: '2025-06-01',
      assumedDemandRatePerYear: 0.1,
      assumedSpuriousRatePerYear: 0.5,
    })
    await c.eng.get('/api/demands/rates').query({ limitId: 'x' }).expect(400)
    // clearing a figure is allowed (the study gives none) and audited like setting it
    await assume(c.eng, '2025-06-01', 'LOPA study LS-12 rev 3', null).expect(200)
    const cleared = (await c.eng.get('/api/demands/rates').query({ limitId: limit.id }).expect(200)).body
    expect(cleared.limits[0]).toMatchObject({ assumedDemandRatePerYear: null, demandRateAboveAssumed: false })
  })

  it("keeps a retired limit's hazard-study rates as they stood (docs/register.md#the-rule-book)", async () => {
    ctx.clock.set('2026-06-01T00:00:00Z')
    const c = await crew()
    const { site, limit } = await buildActiveHeaterTrip(c.changeCrew, { sil: 2 })
    await carryOutChange(c.changeCrew, {
      siteId: site.id,
      title: `Retire ${limit.tag}`,
      items: [{ kind: 'retire', limitId: limit.id }],
    })
    const body = {
      assumedDemandRatePerYear: 0.2,
      assumedSpuriousRatePerYear: 0.5,
      commissionedAt: '2025-06-01',
      reason: 'LOPA study LS-12 rev 4',
    }
    // the role first, then the state
    await c.op.put(`/api/demands/assumptions/${limit.id}`, body).expect(403)
    const refused = (await c.eng.put(`/api/demands/assumptions/${limit.id}`, body).expect(409)).body
    expect(refused.error).toMatchObject({
      code: 'INVALID_STATE',
      message: `Limit ${limit.tag} is retired; its hazard-study rates are kept for the record as they stood.`,
    })
  })
})
