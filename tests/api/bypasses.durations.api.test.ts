import { beforeAll, describe, expect, it } from 'vitest'
import { createBypassJob } from '../../server/features/bypasses/bypasses.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn, signedIn } from './helpers/agent.ts'
import { draftChange, auditActions, buildHeaterTrip, ACTIVATE, rowsAndAudit } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const HOUR = 3_600_000
const PEOPLE = ['engineer', 'approver', 'approver2', 'technician', 'supervisor', 'operator', 'manager'] as const
type Who = (typeof PEOPLE)[number]

const { as, signInAll, app } = useSignedIn(ctx, PEOPLE, { at: '2026-06-01T06:00:00Z' })

const crew = () => ({ eng: as.engineer, approver: as.approver, tech: as.technician })

/** A heater trip like buildHeaterTrip's but with its own longest bypass (the register field `maxBypassHours`), put in service. */
async function limitWithMaxBypass(maxBypassHours: number, siteCode = 'FHR') {
  const { limit } = await buildHeaterTrip(as.engineer, { siteCode })
  const changed = (await as.engineer.patch(`/api/limits/${limit.id}`, { maxBypassHours }).expect(200)).body
  expect(changed.maxBypassHours).toBe(maxBypassHours)
  await activateLimit(crew(), changed)
  return changed as { id: number; siteId: number; tag: string }
}

/** An approved temporary change request of the site (one create item on a fresh proposed limit). */
async function approvedChange(siteCode: string, type: 'temporary' | 'permanent', approve = true) {
  const { limit } = await buildHeaterTrip(as.engineer, { siteCode })
  const cr = await draftChange(as.engineer, {
    siteId: limit.siteId,
    type,
    title: `${type} change for a long bypass`,
    expiresAt: type === 'temporary' ? new Date(ctx.clock.now().getTime() + 30 * 24 * HOUR).toISOString() : null,
    items: [{ kind: 'create', limitId: limit.id }],
  })
  await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
  if (approve)
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
    ).toBe('approved')
  return cr.id as number
}

/** Requests a bypass from the next whole minute for exactly `hours` (one reading of the clock, so the duration is exact). */
const ask = (who: Who, limitId: number, hours: number, extra: Record<string, unknown> = {}) => {
  const start = Math.ceil(ctx.clock.now().getTime() / 60_000) * 60_000 + 60_000
  return as[who].post('/api/bypasses', {
    limitId,
    reason: 'Analyser change-out',
    plannedStart: new Date(start).toISOString(),
    plannedEnd: new Date(start + hours * HOUR).toISOString(),
    predefinedMeasuresConfirmed: true,
    ...extra,
  })
}

/** Moves the clock to a bypass's planned start (it is put in force from then on), a minute or two ahead. */
async function atPlannedStart(b: { plannedStart: string }) {
  if (ctx.clock.now().getTime() < Date.parse(b.plannedStart)) ctx.clock.set(b.plannedStart)
}

async function written() {
  const states = await ctx.db
    .selectFrom('bypass')
    .select(['id', 'status', 'planned_end', 'updated_at'])
    .orderBy('id')
    .execute()
  const rows = await rowsAndAudit(ctx.db, { bypasses: 'bypass', signatures: 'signature', mails: 'mail_outbox' })
  return { ...rows, states }
}

describe('bypass: an authorization not activated in time lapses (docs/bypasses.md default 4 h, common practice)', () => {
  it('activates within 4 h; after 4 h activation answers 409 and the job marks the authorization lapsed', async () => {
    ctx.clock.set('2026-06-01T06:00:00Z')
    await signInAll()
    const first = await limitWithMaxBypass(24)
    const second = await limitWithMaxBypass(24)
    const early = (await ask('operator', first.id, 8).expect(201)).body
    const late = (await ask('operator', second.id, 8).expect(201)).body
    const authorizedAt = new Date(
      (await as.supervisor.post(`/api/bypasses/${early.id}/authorizations`, { password: PW }).expect(200)).body
        .authorizedAt,
    ).getTime()
    const lateAuth = (await as.supervisor.post(`/api/bypasses/${late.id}/authorizations`, { password: PW }).expect(200))
      .body
    // the lapse time runs from the later of the authorization and the planned start
    expect(new Date(late.plannedStart).getTime()).toBeGreaterThan(new Date(lateAuth.authorizedAt).getTime())
    expect(lateAuth.lapsesAt).toBe(new Date(new Date(late.plannedStart).getTime() + 4 * HOUR).toISOString())
    const job = createBypassJob(ctx.db, ctx.config, ctx.clock)

    // 3 h 59 min after the authorization: still valid, the job leaves both alone
    ctx.clock.set(new Date(authorizedAt + 4 * HOUR - 60_000))
    as.operator = await signedIn(app(), 'operator')
    expect(await job.runDue(ctx.clock.now())).toMatchObject({ lapsed: 0 })
    expect((await as.operator.post(`/api/bypasses/${early.id}/activation`, ACTIVATE).expect(200)).body.status).toBe(
      'active',
    )
    expect((await as.operator.get(`/api/bypasses/${late.id}`).expect(200)).body.status).toBe('authorized')

    // 4 h 1 min after the planned start: the service refuses even before the job has run
    ctx.clock.set(new Date(new Date(late.plannedStart).getTime() + 4 * HOUR + 60_000))
    await signInAll()
    const refused = await as.operator.post(`/api/bypasses/${late.id}/activation`, ACTIVATE).expect(409)
    expect(refused.body.error).toMatchObject({ code: 'INVALID_STATE', message: expect.stringContaining('lapsed') })
    expect((await as.operator.get(`/api/bypasses/${late.id}`).expect(200)).body.status).toBe('authorized')

    expect(await job.runDue(ctx.clock.now())).toMatchObject({ lapsed: 1 })
    const lapsed = (await as.operator.get(`/api/bypasses/${late.id}`).expect(200)).body
    expect(lapsed).toMatchObject({ status: 'lapsed', activatedAt: null, lapsesAt: null })
    expect(
      (await as.supervisor.post(`/api/bypasses/${late.id}/activation`, ACTIVATE).expect(409)).body.error.code,
    ).toBe('INVALID_STATE')
    expect((await as.engineer.get(`/api/limits/${second.id}`).expect(200)).body.protectionState).toBe('in_service')
    const events = await auditActions(ctx.db, 'Bypass', late.id)
    expect(events.filter((a) => a === 'bypass.lapse')).toHaveLength(1)
    // the job does not lapse it twice, and never touches the active one
    expect(await job.runDue(ctx.clock.now())).toMatchObject({ lapsed: 0 })
    expect((await as.operator.get(`/api/bypasses/${early.id}`).expect(200)).body.status).toBe('active')
    await as.operator
      .post(`/api/bypasses/${early.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
  })
})

describe('bypass: the longest duration each role may authorize (docs/bypasses.md#role-limits-site-policy: one shift 12 h, plant manager 72 h, common practice)', () => {
  let limit: { id: number; siteId: number; tag: string }
  beforeAll(async () => {
    ctx.clock.set('2026-06-02T06:00:00Z')
    await signInAll()
    limit = await limitWithMaxBypass(100)
  })

  it('a 20 h bypass is refused for the shift supervisor and the approver (403, nothing written) and authorized by the plant manager', async () => {
    const b = (await ask('operator', limit.id, 20).expect(201)).body
    expect(b.plannedHours).toBeCloseTo(20, 9)
    for (const who of ['supervisor', 'approver'] as const) {
      const before = await written()
      const res = await as[who].post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(403)
      expect(res.body.error.code).toBe('FORBIDDEN')
      expect(res.body.error.message).toContain('12 h')
      expect(await written()).toEqual(before)
    }
    const ok = (await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)).body
    expect(ok).toMatchObject({
      status: 'authorized',
      authorizations: [expect.objectContaining({ name: 'Piet Vanderholm', meaning: 'authorized' })],
    })
    await as.operator.post(`/api/bypasses/${b.id}/cancellation`).expect(200)
  })

  it('both edges of the shift limit: 12 h is authorized by an approver, 12.5 h is not', async () => {
    const twelve = (await ask('operator', limit.id, 12).expect(201)).body
    expect(
      (await as.approver.post(`/api/bypasses/${twelve.id}/authorizations`, { password: PW }).expect(200)).body.status,
    ).toBe('authorized')
    const longer = (await ask('operator', limit.id, 12.5).expect(201)).body
    await as.approver.post(`/api/bypasses/${longer.id}/authorizations`, { password: PW }).expect(403)
    await as.supervisor.post(`/api/bypasses/${longer.id}/authorizations`, { password: PW }).expect(403)
    for (const id of [twelve.id, longer.id]) await as.operator.post(`/api/bypasses/${id}/cancellation`).expect(200)
  })

  it('beyond 72 h a temporary change request of the same site is required and linked', async () => {
    const before = await written()
    const without = await ask('operator', limit.id, 80).expect(400)
    expect(without.body.error.details.fields.changeRequestId[0]).toContain('temporary change request')
    const permanent = await approvedChange('FHR', 'permanent')
    const notApproved = await approvedChange('FHR', 'temporary', false)
    const otherSite = await approvedChange('SMP', 'temporary')
    const beforeRefusals = await written()
    for (const changeRequestId of [permanent, notApproved, otherSite, 999_999]) {
      const res = await ask('operator', limit.id, 80, { changeRequestId }).expect(400)
      expect(res.body.error.details.fields.changeRequestId, `change request ${changeRequestId}`).toBeDefined()
    }
    expect(await written()).toEqual(beforeRefusals)
    expect(beforeRefusals.bypasses).toBe(before.bypasses)

    const temporary = await approvedChange('FHR', 'temporary')
    const linked = (await ask('operator', limit.id, 80, { changeRequestId: temporary }).expect(201)).body
    expect(linked).toMatchObject({ status: 'requested', changeRequestId: temporary })
    // the limit's own maximum still holds with a change request
    const tooLong = await ask('operator', limit.id, 101, { changeRequestId: temporary }).expect(400)
    expect(tooLong.body.error.details.fields.plannedEnd[0]).toContain('100 h')

    // the shift supervisor's one shift does not grow with the change; the plant manager signs under the approved change
    await as.supervisor.post(`/api/bypasses/${linked.id}/authorizations`, { password: PW }).expect(403)
    const authorized = (
      await as.manager.post(`/api/bypasses/${linked.id}/authorizations`, { password: PW }).expect(200)
    ).body
    expect(authorized).toMatchObject({ status: 'authorized', changeRequestId: temporary })
    await as.operator.post(`/api/bypasses/${linked.id}/cancellation`).expect(200)
  })

  it('a change request named on a shorter bypass is checked too: it cannot open the way past 72 h later', async () => {
    const permanent = await approvedChange('FHR', 'permanent')
    const res = await ask('operator', limit.id, 70, { changeRequestId: permanent }).expect(400)
    expect(res.body.error.details.fields.changeRequestId).toBeDefined()
    // without one, an extension past 72 h in all is refused
    const b = (await ask('operator', limit.id, 70).expect(201)).body
    await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
    const before = await written()
    const ext = await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 10 }).expect(400)
    expect(ext.body.error.details.fields.hours[0]).toContain('temporary change request')
    expect(await written()).toEqual(before)
    await as.operator.post(`/api/bypasses/${b.id}/cancellation`).expect(200)
  })
})

describe('bypass: an extension is a further signed authorization (docs/bypasses.md#workflow)', () => {
  it("adds a signature and moves the planned end, within the signer's limit and the limit's own maximum", async () => {
    ctx.clock.set('2026-06-03T06:00:00Z')
    await signInAll()
    // buildHeaterTrip: maxBypassHours 8
    const { limit } = await buildHeaterTrip(as.engineer)
    await activateLimit(crew(), limit)
    const b = (await ask('operator', limit.id, 5).expect(201)).body
    await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
    await atPlannedStart(b)
    await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)

    const noHours = await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(400)
    expect(noHours.body.error.details.fields.hours).toBeDefined()
    const extended = (
      await as.approver
        .post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 2, comment: 'Analyser spares late' })
        .expect(200)
    ).body
    expect(extended.status).toBe('active')
    expect(extended.authorizations.map((a: { meaning: string; name: string }) => [a.meaning, a.name])).toEqual([
      ['authorized', 'Hedda Marlowe'],
      ['authorized', 'Arlo Pennick'],
    ])
    expect(new Date(extended.plannedEnd).getTime() - new Date(b.plannedEnd).getTime()).toBe(2 * HOUR)
    expect(extended.plannedHours).toBeCloseTo(7, 9)
    expect(extended.authorizations[1].contentHash).not.toBe(extended.authorizations[0].contentHash)

    // 7 h + 1.5 h would pass the limit's own 8 h: refused, nothing written
    const before = await written()
    const tooLong = await as.manager
      .post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 1.5 })
      .expect(400)
    expect(tooLong.body.error.details.fields.hours[0]).toContain('8 h')
    expect(await written()).toEqual(before)

    // exactly to the maximum is allowed
    const full = (await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 1 }).expect(200))
      .body
    expect(full.plannedHours).toBeCloseTo(8, 9)
    expect(full.authorizations).toHaveLength(3)
    expect(await auditActions(ctx.db, 'Bypass', b.id)).toEqual([
      'bypass.request',
      'bypass.authorize',
      'bypass.activate',
      'bypass.extend',
      'bypass.extend',
    ])
    await as.operator
      .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
  })

  it('a signer extends by no more than their role may authorize, and never their own request', async () => {
    const l = await limitWithMaxBypass(100)
    const b = (await ask('supervisor', l.id, 4).expect(201)).body
    await as.approver.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
    await atPlannedStart(b)
    await as.supervisor.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
    const before = await written()
    await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 1 }).expect(403)
    await as.approver.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 13 }).expect(403)
    expect(await written()).toEqual(before)
    expect(
      (await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 13 }).expect(200)).body
        .plannedHours,
    ).toBeCloseTo(17, 9)
    await as.operator
      .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
  })
})
