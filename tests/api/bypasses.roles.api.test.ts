import type { Response } from 'supertest'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { type ApiAgent, DEMO_ACCOUNTS, useSignedIn } from './helpers/agent.ts'
import { auditActions, actionEvents, buildHeaterTrip, ACTIVATE, countRows } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = DEMO_ACCOUNTS
type Who = (typeof PEOPLE)[number]

const { as, signInAll } = useSignedIn(ctx, PEOPLE, { at: '2026-05-04T06:00:00Z' })
let limitId = 0

/** Everything a bypass action writes (sign-in events excluded: signing in is not the action). */
async function written() {
  const count = async (table: 'signature' | 'mail_outbox') => countRows(ctx.db, table)
  const attempts = await ctx.db
    .selectFrom('sign_in_attempt')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('purpose', '=', 'signature')
    .executeTakeFirstOrThrow()
  return {
    bypasses: await ctx.db
      .selectFrom('bypass')
      .select(['id', 'status', 'planned_end', 'activated_at', 'removed_at', 'updated_at'])
      .orderBy('id')
      .execute(),
    signatures: await count('signature'),
    mails: await count('mail_outbox'),
    audit: await actionEvents(ctx.db),
    signatureAttempts: Number(attempts.n),
    limits: await ctx.db.selectFrom('limit_function').select(['id', 'protection_state']).orderBy('id').execute(),
  }
}

/** Everyone but `allowed` tries the action: each gets 403 FORBIDDEN and nothing is written. */
async function refusedForAllBut(allowed: Who[], call: (a: ApiAgent) => Promise<Response>) {
  for (const who of PEOPLE.filter((p) => !allowed.includes(p))) {
    const before = await written()
    const res = await call(as[who])
    expect(res.status, `${who}: ${JSON.stringify(res.body)}`).toBe(403)
    expect(res.body.error.code, who).toBe('FORBIDDEN')
    expect(await written(), who).toEqual(before)
  }
}

const request = (who: Who, reason: string) =>
  as[who].post('/api/bypasses', {
    limitId,
    reason,
    plannedStart: '2026-05-04T06:30:00Z',
    plannedEnd: '2026-05-04T10:30:00Z',
    predefinedMeasuresConfirmed: true,
  })

beforeAll(async () => {
  const { limit } = await buildHeaterTrip(as.engineer)
  await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, limit)
  limitId = limit.id
})

describe('bypass: who may do what (docs/bypasses.md#rules)', () => {
  const ids = {} as Record<'op' | 'tech' | 'sup' | 'eng' | 'sup2' | 'op2', number>

  it('operators, technicians, shift supervisors and engineers request; everyone else gets 403 and nothing is written', async () => {
    await refusedForAllBut(['operator', 'technician', 'supervisor', 'engineer'], (a) =>
      a.post('/api/bypasses', {
        limitId,
        reason: 'Refused request',
        plannedStart: '2026-05-04T06:30:00Z',
        plannedEnd: '2026-05-04T10:30:00Z',
        predefinedMeasuresConfirmed: true,
      }),
    )
    const made: [keyof typeof ids, Who][] = [
      ['op', 'operator'],
      ['tech', 'technician'],
      ['sup', 'supervisor'],
      ['eng', 'engineer'],
      ['sup2', 'supervisor'],
      ['op2', 'operator'],
    ]
    for (const [key, who] of made) {
      const b = (await request(who, `Burner maintenance (${key})`).expect(201)).body
      expect(b).toMatchObject({
        status: 'requested',
        limitId,
        authorizations: [],
        compensatingMeasures: ['Operator watches TI locally every 15 min'],
      })
      ids[key] = b.id
    }
    const rows = await ctx.db
      .selectFrom('bypass')
      .innerJoin('app_user', 'app_user.id', 'bypass.requested_by')
      .select(['bypass.id', 'app_user.email'])
      .orderBy('bypass.id')
      .execute()
    expect(rows.map((r) => r.email)).toEqual(made.map(([, who]) => `${who}@fernhollow.example`))
  })

  it('approvers, shift supervisors and plant managers authorize, never their own request; everyone else gets 403 and nothing is written', async () => {
    await refusedForAllBut(['approver', 'approver2', 'supervisor', 'manager'], (a) =>
      a.post(`/api/bypasses/${ids.op}/authorizations`, { password: PW }),
    )

    // separation of duties (common practice: authorisation by a competent person other than the requester)
    const before = await written()
    const own = await as.supervisor.post(`/api/bypasses/${ids.sup}/authorizations`, { password: PW }).expect(403)
    expect(own.body.error.code).toBe('FORBIDDEN')
    expect(own.body.error.message).toContain('own')
    expect(await written()).toEqual(before)

    const byApprover = (
      await as.approver
        .post(`/api/bypasses/${ids.op}/authorizations`, { password: PW, comment: 'Maintenance permit 4711' })
        .expect(200)
    ).body
    expect(byApprover.status).toBe('authorized')
    expect(byApprover.authorizations).toEqual([
      expect.objectContaining({
        name: 'Arlo Pennick',
        meaning: 'authorized',
        comment: 'Maintenance permit 4711',
        contentHash: expect.stringMatching(/^[0-9a-f]{64}$/),
      }),
    ])
    // authorized about 06:00 for a start at 06:30: it lapses 4 h after the planned start (the later of the two)
    expect(Date.parse(byApprover.authorizedAt)).toBeLessThan(Date.parse('2026-05-04T06:30:00Z'))
    expect(byApprover.lapsesAt).toBe('2026-05-04T10:30:00.000Z')
    expect(
      (await as.manager.post(`/api/bypasses/${ids.sup}/authorizations`, { password: PW }).expect(200)).body
        .authorizations[0].name,
    ).toBe('Piet Vanderholm')
    expect(
      (await as.supervisor.post(`/api/bypasses/${ids.tech}/authorizations`, { password: PW }).expect(200)).body
        .authorizations[0].name,
    ).toBe('Hedda Marlowe')
    expect(
      (await as.approver2.post(`/api/bypasses/${ids.op2}/authorizations`, { password: PW }).expect(200)).body.status,
    ).toBe('authorized')
    // an authorized bypass is not authorized again without saying by how much to extend it
    const again = await as.approver2.post(`/api/bypasses/${ids.op}/authorizations`, { password: PW }).expect(400)
    expect(again.body.error.details.fields.hours).toBeDefined()
  })

  it('a wrong password signs nothing: 403 SIGNATURE_INVALID and only the failed attempt is recorded (21 CFR 11.200 as a model)', async () => {
    const before = await written()
    const res = await as.approver
      .post(`/api/bypasses/${ids.eng}/authorizations`, { password: 'not-the-password' })
      .expect(403)
    expect(res.body.error.code).toBe('SIGNATURE_INVALID')
    const after = await written()
    expect(after.bypasses).toEqual(before.bypasses)
    expect(after.signatures).toBe(before.signatures)
    expect(after.mails).toBe(before.mails)
    expect(after.audit).toEqual([...before.audit, 'signature.failed'])
    expect(after.signatureAttempts).toBe(before.signatureAttempts + 1)
    // the session is still valid
    expect((await as.approver.get(`/api/bypasses/${ids.eng}`).expect(200)).body.status).toBe('requested')
  })

  it('rejection: a signed decision by an authorizer, never on their own request', async () => {
    await refusedForAllBut(['approver', 'approver2', 'supervisor', 'manager'], (a) =>
      a.post(`/api/bypasses/${ids.eng}/rejections`, { password: PW, comment: 'No permit' }),
    )
    const before = await written()
    await as.supervisor
      .post(`/api/bypasses/${ids.sup2}/rejections`, { password: PW, comment: 'Own request' })
      .expect(403)
    expect(await written()).toEqual(before)
    const noReason = await as.approver2.post(`/api/bypasses/${ids.eng}/rejections`, { password: PW }).expect(400)
    expect(noReason.body.error.details.fields.comment).toBeDefined()

    const rejected = (
      await as.approver2
        .post(`/api/bypasses/${ids.eng}/rejections`, { password: PW, comment: 'Wait for the turnaround' })
        .expect(200)
    ).body
    expect(rejected.status).toBe('rejected')
    expect(rejected.authorizations).toEqual([
      expect.objectContaining({ name: 'Ines Harrowgate', meaning: 'rejected', comment: 'Wait for the turnaround' }),
    ])
    // rejected is final
    expect(
      (await as.approver.post(`/api/bypasses/${ids.eng}/authorizations`, { password: PW }).expect(409)).body.error.code,
    ).toBe('INVALID_STATE')
    expect(
      (await as.approver.post(`/api/bypasses/${ids.eng}/rejections`, { password: PW, comment: 'Again' }).expect(409))
        .body.error.code,
    ).toBe('INVALID_STATE')
    expect((await as.operator.post(`/api/bypasses/${ids.eng}/activation`, ACTIVATE).expect(409)).body.error.code).toBe(
      'INVALID_STATE',
    )
  })

  it('shift supervisors, technicians and operators activate and remove; everyone else gets 403 and nothing is written', async () => {
    const clear = { pvClearConfirmed: true, protectionRestoredConfirmed: true }
    // a bypass is put in force from its planned start on
    ctx.clock.set('2026-05-04T06:30:00Z')
    await signInAll()
    await refusedForAllBut(['supervisor', 'technician', 'operator'], (a) =>
      a.post(`/api/bypasses/${ids.op}/activation`, ACTIVATE),
    )
    const active = (await as.supervisor.post(`/api/bypasses/${ids.op}/activation`, ACTIVATE).expect(200)).body
    expect(active).toMatchObject({ status: 'active', activatedBy: 'Hedda Marlowe', overdue: false })
    expect((await as.engineer.get(`/api/limits/${limitId}`).expect(200)).body.protectionState).toBe('bypassed')

    await refusedForAllBut(['supervisor', 'technician', 'operator'], (a) =>
      a.post(`/api/bypasses/${ids.op}/removal`, clear),
    )
    const removed = (await as.technician.post(`/api/bypasses/${ids.op}/removal`, clear).expect(200)).body
    expect(removed).toMatchObject({ status: 'removed', removedBy: 'Tomas Quillfeather', pvClearConfirmed: true })
    expect((await as.engineer.get(`/api/limits/${limitId}`).expect(200)).body.protectionState).toBe('in_service')

    expect(
      (await as.technician.post(`/api/bypasses/${ids.tech}/activation`, ACTIVATE).expect(200)).body.activatedBy,
    ).toBe('Tomas Quillfeather')
    expect((await as.operator.post(`/api/bypasses/${ids.tech}/removal`, clear).expect(200)).body.removedBy).toBe(
      'Olive Tanager',
    )
    expect((await as.operator.post(`/api/bypasses/${ids.sup}/activation`, ACTIVATE).expect(200)).body.activatedBy).toBe(
      'Olive Tanager',
    )
    expect((await as.supervisor.post(`/api/bypasses/${ids.sup}/removal`, clear).expect(200)).body.removedBy).toBe(
      'Hedda Marlowe',
    )

    expect(await auditActions(ctx.db, 'Bypass', ids.op)).toEqual([
      'bypass.request',
      'bypass.authorize',
      'bypass.activate',
      'bypass.remove',
    ])
  })

  it('cancellation: the requester or an authorizer, while requested or authorized; anyone else gets 403', async () => {
    await refusedForAllBut(['supervisor', 'approver', 'approver2', 'manager'], (a) =>
      a.post(`/api/bypasses/${ids.sup2}/cancellation`),
    )
    expect((await as.supervisor.post(`/api/bypasses/${ids.sup2}/cancellation`).expect(200)).body.status).toBe(
      'cancelled',
    )
    // an authorized one, cancelled by an authorizer who is not the requester
    await refusedForAllBut(['operator', 'supervisor', 'approver', 'approver2', 'manager'], (a) =>
      a.post(`/api/bypasses/${ids.op2}/cancellation`),
    )
    expect((await as.manager.post(`/api/bypasses/${ids.op2}/cancellation`).expect(200)).body.status).toBe('cancelled')

    for (const id of [ids.op2, ids.op, ids.eng]) {
      expect((await as.manager.post(`/api/bypasses/${id}/cancellation`).expect(409)).body.error.code, `#${id}`).toBe(
        'INVALID_STATE',
      )
    }
    expect((await as.operator.post(`/api/bypasses/${ids.op2}/activation`, ACTIVATE).expect(409)).body.error.code).toBe(
      'INVALID_STATE',
    )
    expect(
      (await as.approver.post(`/api/bypasses/${ids.op2}/authorizations`, { password: PW, hours: 1 }).expect(409)).body
        .error.code,
    ).toBe('INVALID_STATE')
  })

  it('everyone with a role at the site reads the bypasses and their history', async () => {
    for (const who of PEOPLE) expect((await as[who].get(`/api/bypasses/${ids.op}`)).status, who).toBe(200)
    const list = (await as.auditor.get(`/api/bypasses?limitId=${limitId}`).expect(200)).body
    expect(list.total).toBe(6)
    expect(list.items.map((b: { status: string }) => b.status).sort()).toEqual([
      'cancelled',
      'cancelled',
      'rejected',
      'removed',
      'removed',
      'removed',
    ])
  })
})
