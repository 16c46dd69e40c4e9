import type { Response } from 'supertest'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import {
  draftChange,
  heaterAlarmBody,
  heaterTripBody,
  heaterWithChannels,
  readyToImplement,
  rowsAndAudit,
} from './helpers/factories.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = ['engineer', 'approver', 'technician', 'operator'] as const

const T0 = '2026-05-18T06:00:00Z'
const { as } = useSignedIn(ctx, PEOPLE, { at: T0 })

interface Built {
  limit: { id: number; siteId: number; tag: string }
  instruments: { id: number; tag: string }[]
}

/** A fired-heater temperature limit with `channels` thermocouples (one per voted sensor), proposed, via the API as the engineer. */
async function buildLimit(
  o: {
    channels?: number
    limitClass?: 'trip' | 'alarm'
    measures?: string[]
    bypassPermitted?: boolean
    maxBypassHours?: number | null
  } = {},
): Promise<Built> {
  const eng = as.engineer
  const { proc, instruments, n } = await heaterWithChannels(eng, o.channels ?? 1)
  const alarm = o.limitClass === 'alarm'
  const limit = await eng.created('/api/limits', {
    ...(alarm ? heaterAlarmBody : heaterTripBody)(
      proc.id,
      instruments.map((i) => i.id),
      `${alarm ? 'TAH' : 'TSHH'}-B${n}`,
    ),
    compensatingMeasures: o.measures ?? ['Operator watches TI locally every 15 min'],
    bypassPermitted: o.bypassPermitted ?? true,
    maxBypassHours: o.bypassPermitted === false ? null : o.maxBypassHours === undefined ? 8 : o.maxBypassHours,
  })
  return { limit, instruments }
}

async function inService(o: Parameters<typeof buildLimit>[0] = {}) {
  const b = await buildLimit(o)
  await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, b.limit)
  return b
}

const written = () => rowsAndAudit(ctx.db, { bypasses: 'bypass', signatures: 'signature', mails: 'mail_outbox' })

/** Asserts the refusal and that nothing was written; answers the error body. */
async function refused(status: number, call: () => Promise<Response>) {
  const before = await written()
  const res = await call()
  expect(res.status, JSON.stringify(res.body)).toBe(status)
  expect(await written()).toEqual(before)
  return res.body.error as { code: string; message: string; details?: { fields: Record<string, string[]> } }
}

const req = (limitId: number, extra: Record<string, unknown> = {}) =>
  as.operator.post('/api/bypasses', {
    limitId,
    reason: 'Thermocouple replacement',
    plannedStart: '2026-05-18T06:30:00Z',
    plannedEnd: '2026-05-18T10:30:00Z',
    predefinedMeasuresConfirmed: true,
    ...extra,
  })

let trip: Built
beforeAll(async () => {
  trip = await inService()
})

describe('bypass request: bad input is refused with a clear message and nothing written (issue 6 "Bad input")', () => {
  it('no end before (or at) the start: 400 on plannedEnd', async () => {
    const before = await refused(400, () =>
      req(trip.limit.id, { plannedStart: '2026-05-18T10:30:00Z', plannedEnd: '2026-05-18T06:30:00Z' }),
    )
    expect(before.details!.fields.plannedEnd[0]).toContain('after the start')
    const same = await refused(400, () =>
      req(trip.limit.id, { plannedStart: '2026-05-18T10:30:00Z', plannedEnd: '2026-05-18T10:30:00Z' }),
    )
    expect(same.details!.fields.plannedEnd).toBeDefined()
    const passed = await refused(400, () =>
      req(trip.limit.id, { plannedStart: '2026-05-18T04:00:00Z', plannedEnd: '2026-05-18T05:00:00Z' }),
    )
    expect(passed.details!.fields.plannedEnd[0]).toContain('passed')
    const noZone = await refused(400, () => req(trip.limit.id, { plannedEnd: '18.05.2026 10:30' }))
    expect(noZone.details!.fields.plannedEnd).toBeDefined()
  })

  it('no bypass of a proposed or retired limit: 409 INVALID_STATE', async () => {
    const proposed = await buildLimit()
    const e1 = await refused(409, () => req(proposed.limit.id))
    expect(e1).toMatchObject({ code: 'INVALID_STATE', message: expect.stringContaining('proposed') })

    const retiring = await inService()
    const cr = await draftChange(as.engineer, {
      siteId: retiring.limit.siteId,
      title: 'Retire heater trip',
      items: [{ kind: 'retire', limitId: retiring.limit.id }],
    })
    await readyToImplement(as.engineer, cr.id)
    await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
    const approved = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200))
      .body
    await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, {
        itemId: approved.items[0].id,
        readBack: {},
        password: PW,
      })
      .expect(200)
    expect((await as.engineer.get(`/api/limits/${retiring.limit.id}`).expect(200)).body.status).toBe('retired')
    const e2 = await refused(409, () => req(retiring.limit.id))
    expect(e2).toMatchObject({ code: 'INVALID_STATE', message: expect.stringContaining('retired') })
    const unknown = await refused(400, () => req(999_999))
    expect(unknown.details!.fields.limitId).toBeDefined()
  })

  it('a limit marked "bypass not permitted" cannot be bypassed: 422', async () => {
    const fixed = await inService({ bypassPermitted: false })
    const e = await refused(422, () => req(fixed.limit.id))
    expect(e).toMatchObject({ code: 'UNPROCESSABLE', message: expect.stringContaining('not permitted') })
  })

  it("no duration beyond the limit's own maximum: 400 on plannedEnd; exactly the maximum is accepted", async () => {
    // buildLimit: maxBypassHours 8
    const e = await refused(400, () => req(trip.limit.id, { plannedEnd: '2026-05-18T14:31:00Z' }))
    expect(e.details!.fields.plannedEnd[0]).toContain('At most 8 h')
    const edge = (await req(trip.limit.id, { plannedEnd: '2026-05-18T14:30:00Z' }).expect(201)).body
    expect(edge.plannedHours).toBe(8)
    await as.operator.post(`/api/bypasses/${edge.id}/cancellation`).expect(200)
  })

  it('the predefined compensating measures must be confirmed; a trip without any needs extra ones (docs/bypasses.md "trips and every SIL-rated limit", common practice)', async () => {
    for (const confirmed of [undefined, false]) {
      const e = await refused(400, () => req(trip.limit.id, { predefinedMeasuresConfirmed: confirmed }))
      expect(e.details!.fields.predefinedMeasuresConfirmed[0]).toContain('Confirm')
    }
    const bare = await inService({ measures: [] })
    const e = await refused(400, () => req(bare.limit.id, { predefinedMeasuresConfirmed: false }))
    expect(e.details!.fields.extraMeasures).toBeDefined()
    const withExtra = (await req(bare.limit.id, { extraMeasures: ['Second operator at the local panel'] }).expect(201))
      .body
    expect(withExtra.compensatingMeasures).toEqual(['Second operator at the local panel'])
    // predefined and extra measures are both kept, predefined first
    const both = (await req(trip.limit.id, { extraMeasures: ['Fire watch at the burner front'] }).expect(201)).body
    expect(both.compensatingMeasures).toEqual([
      'Operator watches TI locally every 15 min',
      'Fire watch at the burner front',
    ])
    // an alarm is not a trip: the site policy does not require measures
    const alarm = await inService({ limitClass: 'alarm', measures: [] })
    expect((await req(alarm.limit.id).expect(201)).body.compensatingMeasures).toEqual([])
  })

  it('a single channel only of a voted function, and only one of its own channels: 400 on channelInstrumentId', async () => {
    const single = await refused(400, () => req(trip.limit.id, { channelInstrumentId: trip.instruments[0].id }))
    expect(single.details!.fields.channelInstrumentId[0]).toContain('voted')
    const voted = await inService({ channels: 2 })
    const foreign = await refused(400, () => req(voted.limit.id, { channelInstrumentId: trip.instruments[0].id }))
    expect(foreign.details!.fields.channelInstrumentId).toBeDefined()
    const channel = (await req(voted.limit.id, { channelInstrumentId: voted.instruments[1].id }).expect(201)).body
    expect(channel).toMatchObject({
      channelInstrumentId: voted.instruments[1].id,
      channelTag: voted.instruments[1].tag,
      status: 'requested',
    })
  })

  it('the reason must say why', async () => {
    const e = await refused(400, () => req(trip.limit.id, { reason: ' ok ' }))
    expect(e.details!.fields.reason).toBeDefined()
  })
})
