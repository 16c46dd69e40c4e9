import Papa from 'papaparse'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { DEMO_ACCOUNTS, signedIn, useSignedIn, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'
import { ACTIVATE, heaterAlarmBody, heaterThermocouple, heaterTripBody, mvSourceTest } from './helpers/factories.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = DEMO_ACCOUNTS
type Who = (typeof PEOPLE)[number]

const { as, signInAll, app } = useSignedIn(ctx, PEOPLE, { at: '2026-05-31T10:00:00Z' })
let seq = 0
const userIds = {} as Record<Who, number>

/** A fired-heater trip (or an alarm without compensating measures) in the given site and area, put in service. */
async function limitIn(siteCode: 'FHR' | 'SMP', areaIndex: number, kind: 'trip' | 'alarm' = 'trip') {
  const eng = as.engineer
  const siteId = await siteIdByCode(eng, siteCode)
  const area = ((await eng.get(`/api/areas?siteId=${siteId}`).expect(200)).body.items as { id: number }[])[areaIndex]
  const n = `${process.pid % 1000}-${++seq}`
  const proc = await eng.created('/api/processes', {
    areaId: area.id,
    name: `Review heater H-${n}`,
    description: 'fired heater',
  })
  const inst = await eng.created('/api/instruments', heaterThermocouple(proc.id, `TTR-${n}`))
  const alarm = kind === 'alarm'
  const limit = await eng.created('/api/limits', {
    ...(alarm ? heaterAlarmBody : heaterTripBody)(proc.id, [inst.id], `${alarm ? 'TAH' : 'TSHH'}-R${n}`),
    compensatingMeasures: alarm ? [] : ['Operator watches TI locally every 15 min'],
    maxBypassHours: 100,
    bypassPermitted: true,
  })
  await activateLimit({ eng, approver: as.approver, tech: as.technician }, limit)
  return { ...limit, areaId: area.id as number } as { id: number; siteId: number; areaId: number; tag: string }
}

/** Moves the clock and signs in again who acts next (sessions end after 30 min idle on that clock); everyone when nobody is named. */
async function at(iso: string, ...who: Who[]) {
  ctx.clock.set(iso)
  if (!who.length) await signInAll()
  for (const w of who) as[w] = await signedIn(app(), w)
}

const clear = { pvClearConfirmed: true, protectionRestoredConfirmed: true }
type Limit = Awaited<ReturnType<typeof limitIn>>
let A: Limit, B: Limit, D: Limit, F: Limit
const ids = {} as Record<'b1' | 'b2' | 'b3' | 'b4' | 'b5' | 'b6', number>

async function requestAndAuthorize(
  requester: Who,
  authorizer: Who,
  limitId: number,
  start: string,
  end: string,
  measures = true,
) {
  const b = await as[requester].created('/api/bypasses', {
    limitId,
    reason: 'Planned work',
    plannedStart: start,
    plannedEnd: end,
    predefinedMeasuresConfirmed: measures,
  })
  await as[authorizer].post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
  return b.id as number
}

/** Bypass `id` put in at `start` and taken out at `end`, both by `who` with the clock moved to each. */
async function inAndOut(who: Who, id: number, start: string, end: string) {
  await at(start, who)
  await as[who].post(`/api/bypasses/${id}/activation`, ACTIVATE).expect(200)
  await at(end, who)
  await as[who].post(`/api/bypasses/${id}/removal`, clear).expect(200)
}

/*
 * The history (UTC):
 * b1  A  operator / supervisor   31 May 20:00 → 1 Jun 03:59 (planned 04:00)  across the month boundary: 4 h in May, 3.98 h in June
 * b2  B  technician / approver    2 Jun 08:00 → 11:00 (planned 10:00)      alarm without compensating measures, 1 h past its end
 * b3  A  engineer / manager       3 Jun 06:00 → 19:59 (planned 20:00)      longer than a shift
 *     F  failed trip test signed  4 Jun 10:00                               degraded since
 * b5  D  technician / approver2   4 Jun 12:00 → 14:00 (planned 15:00)      the other site
 * b4  A  operator / supervisor    5 Jun 08:00 → still active (planned 10:00) overdue at 12:00
 * b6  B  operator                 5 Jun 11:50 requested only, for 11:55 → 15:00
 * now 5 Jun 12:00
 */
beforeAll(async () => {
  for (const r of await ctx.db.selectFrom('app_user').select(['id', 'email']).execute()) {
    const who = r.email.split('@')[0] as Who
    if (PEOPLE.includes(who)) userIds[who] = r.id
  }
  A = await limitIn('FHR', 0)
  B = await limitIn('FHR', 1, 'alarm')
  D = await limitIn('SMP', 0)
  F = await limitIn('FHR', 0)

  await at('2026-05-31T19:00:00Z', 'operator', 'supervisor')
  ids.b1 = await requestAndAuthorize('operator', 'supervisor', A.id, '2026-05-31T20:00:00Z', '2026-06-01T04:00:00Z')
  await inAndOut('operator', ids.b1, '2026-05-31T20:00:00Z', '2026-06-01T03:59:00Z')

  await at('2026-06-02T07:30:00Z', 'technician', 'approver')
  ids.b2 = await requestAndAuthorize(
    'technician',
    'approver',
    B.id,
    '2026-06-02T08:00:00Z',
    '2026-06-02T10:00:00Z',
    false,
  )
  await inAndOut('technician', ids.b2, '2026-06-02T08:00:00Z', '2026-06-02T11:00:00Z')

  await at('2026-06-03T05:30:00Z', 'engineer', 'manager')
  ids.b3 = await requestAndAuthorize('engineer', 'manager', A.id, '2026-06-03T06:00:00Z', '2026-06-03T20:00:00Z')
  await inAndOut('supervisor', ids.b3, '2026-06-03T06:00:00Z', '2026-06-03T19:59:00Z')

  // a failed trip test (as found 800 °C against a 780 °C trip, tolerance ±6 °C: out, dangerous side) degrades F
  await at('2026-06-04T10:00:00Z', 'technician')
  const test = await as.technician.created(
    '/api/trip-tests',
    mvSourceTest(F.id, {
      performedAt: '2026-06-04T09:30:00Z',
      finalElementOk: true,
      latchHeld: true,
      asFound: 800,
    }),
  )
  expect(test.asFoundResult).toBe('out_dangerous')
  await as.technician.post(`/api/trip-tests/${test.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)

  await at('2026-06-04T11:30:00Z', 'technician', 'approver2')
  ids.b5 = await requestAndAuthorize('technician', 'approver2', D.id, '2026-06-04T12:00:00Z', '2026-06-04T15:00:00Z')
  await inAndOut('technician', ids.b5, '2026-06-04T12:00:00Z', '2026-06-04T14:00:00Z')

  await at('2026-06-05T07:30:00Z', 'operator', 'supervisor')
  ids.b4 = await requestAndAuthorize('operator', 'supervisor', A.id, '2026-06-05T08:00:00Z', '2026-06-05T10:00:00Z')
  await at('2026-06-05T08:00:00Z', 'operator')
  await as.operator.post(`/api/bypasses/${ids.b4}/activation`, ACTIVATE).expect(200)
  await at('2026-06-05T11:50:00Z', 'operator')
  ids.b6 = (
    await as.operator.created('/api/bypasses', {
      limitId: B.id,
      reason: 'Next job',
      plannedStart: '2026-06-05T11:55:00Z',
      plannedEnd: '2026-06-05T15:00:00Z',
    })
  ).id
  await at('2026-06-05T12:00:00Z')
}, 240_000)

interface Review {
  period: { from: string; to: string }
  kpis: Record<string, number>
  charts: {
    hoursPerMonth: { month: string; hours: number }[]
    topLimits: { limitId: number; tag: string; hours: number }[]
    overduePerMonth: { month: string; count: number }[]
  }
  items: { id: number; status: string; overdue: boolean }[]
}
const review = async (query = '', who: Who = 'manager') =>
  (await as[who].get(`/api/bypass-review${query}`).expect(200)).body as Review
const idsOf = (r: Review) => r.items.map((i) => i.id)
const month = (r: Review, m: string) => r.charts.hoursPerMonth.find((x) => x.month === m)!.hours

describe("the plant manager's bypass review (issue 6)", () => {
  it('KPIs: active now, overdue now, hours this month, average duration, longer than a shift, without measures, share past planned end, hours degraded', async () => {
    const r = await review()
    expect(idsOf(r).sort((x, y) => x - y)).toEqual(Object.values(ids).sort((x, y) => x - y))
    expect(r.kpis.activeNow).toBe(1)
    expect(r.kpis.overdueNow).toBe(1)
    // June: b1 3.98 + b2 3 + b3 13.98 + b5 2 + b4 4 (active, to now)
    expect(r.kpis.hoursThisMonth).toBeCloseTo(3 + 59 / 60 + 3 + 13 + 59 / 60 + 2 + 4, 1)
    // completed bypasses b1, b2, b3, b5
    expect(r.kpis.averageDurationHours).toBeCloseTo((7 + 59 / 60 + 3 + 13 + 59 / 60 + 2) / 4, 1)
    // one shift: the site policy's 12 h (docs/bypasses.md, common practice)
    expect(r.kpis.shiftHours).toBe(12)
    expect(r.kpis.longerThanShift).toBe(1)
    // target 0 (issue 6): b2 on the alarm without measures
    expect(r.kpis.withoutMeasures).toBe(1)
    // of the five activated bypasses, b2 (removed 1 h late) and b4 (still active past its end) went past their planned end
    expect(r.kpis.sharePastPlannedEnd).toBeCloseTo(2 / 5, 9)
    // F degraded from 4 Jun 10:00 to now
    expect(r.kpis.hoursDegraded).toBeCloseTo(26, 1)
    expect(r.items.find((i) => i.id === ids.b4)).toMatchObject({ status: 'active', overdue: true })
  })

  it('charts: hours per month split at the month boundary, the limits with most bypass hours in order, overdue bypasses per month', async () => {
    const r = await review()
    expect(r.charts.hoursPerMonth.map((m) => m.month)).toEqual([
      '2025-07',
      '2025-08',
      '2025-09',
      '2025-10',
      '2025-11',
      '2025-12',
      '2026-01',
      '2026-02',
      '2026-03',
      '2026-04',
      '2026-05',
      '2026-06',
    ])
    expect(month(r, '2026-05')).toBeCloseTo(4, 1)
    expect(month(r, '2026-06')).toBeCloseTo(r.kpis.hoursThisMonth, 6)
    expect(
      r.charts.hoursPerMonth.filter((m) => !['2026-05', '2026-06'].includes(m.month)).every((m) => m.hours === 0),
    ).toBe(true)
    expect(r.charts.topLimits.map((l) => l.tag)).toEqual([A.tag, B.tag, D.tag])
    expect(r.charts.topLimits[0].hours).toBeCloseTo(7 + 59 / 60 + 13 + 59 / 60 + 4, 1)
    expect(r.charts.topLimits[1].hours).toBeCloseTo(3, 1)
    expect(r.charts.topLimits[2].hours).toBeCloseTo(2, 1)
    // the month series and the per-limit totals count the same hours
    const monthly = r.charts.hoursPerMonth.reduce((s, m) => s + m.hours, 0)
    expect(monthly).toBeCloseTo(
      r.charts.topLimits.reduce((s, l) => s + l.hours, 0),
      6,
    )
    expect(r.charts.overduePerMonth.find((m) => m.month === '2026-06')!.count).toBe(2)
    expect(r.charts.overduePerMonth.filter((m) => m.month !== '2026-06').every((m) => m.count === 0)).toBe(true)
  })

  it('filters: site, area, limit, requester, authorizer, state and period', async () => {
    const smp = D.siteId
    expect(idsOf(await review(`?siteId=${smp}`))).toEqual([ids.b5])
    expect((await review(`?siteId=${smp}`)).kpis.activeNow).toBe(0)
    expect(idsOf(await review(`?areaId=${B.areaId}`))).toEqual([ids.b6, ids.b2])
    expect(idsOf(await review(`?limitId=${A.id}`))).toEqual([ids.b4, ids.b3, ids.b1])
    expect(idsOf(await review(`?limitId=${A.id}&limitId=${D.id}`))).toEqual([ids.b4, ids.b5, ids.b3, ids.b1])
    expect(idsOf(await review(`?requesterId=${userIds.technician}`))).toEqual([ids.b5, ids.b2])
    expect(idsOf(await review(`?authorizerId=${userIds.manager}`))).toEqual([ids.b3])
    expect(idsOf(await review(`?authorizerId=${userIds.supervisor}`))).toEqual([ids.b4, ids.b1])
    expect(idsOf(await review('?status=active'))).toEqual([ids.b4])
    expect(idsOf(await review('?status=requested'))).toEqual([ids.b6])
    expect(idsOf(await review('?status=removed'))).toEqual([ids.b5, ids.b3, ids.b2, ids.b1])
    expect(idsOf(await review('?overdue=true'))).toEqual([ids.b4])

    // a period of two days: only what was bypassed in it
    const days = await review('?from=2026-06-02T00:00:00Z&to=2026-06-04T00:00:00Z')
    expect(idsOf(days)).toEqual([ids.b3, ids.b2])
    expect(days.charts.hoursPerMonth).toEqual([{ month: '2026-06', hours: expect.closeTo(3 + 13 + 59 / 60, 1) }])
    // two hours inside b1: the month series counts only the hours inside the period, like the per-limit totals
    const twoHours = await review('?from=2026-06-01T00:00:00Z&to=2026-06-01T02:00:00Z')
    expect(idsOf(twoHours)).toEqual([ids.b1])
    expect(twoHours.charts.topLimits).toEqual([{ limitId: A.id, tag: A.tag, hours: 2 }])
    expect(twoHours.charts.hoursPerMonth).toEqual([{ month: '2026-06', hours: 2 }])
    // a shift supervisor reviews the site where they hold the role only
    expect(idsOf(await review('', 'supervisor'))).not.toContain(ids.b5)
    expect(idsOf(await review('', 'supervisor'))).toHaveLength(5)
  })

  it('exports the history to CSV and PDF', async () => {
    const csv = await as.manager.get('/api/bypass-review/export?format=csv').expect(200)
    expect(csv.headers['content-type']).toContain('text/csv')
    const parsed = Papa.parse<Record<string, string>>(csv.text.replace(/^\uFEFF/, ''), {
      header: true,
      skipEmptyLines: true,
    })
    expect(parsed.data).toHaveLength(6)
    const b4 = parsed.data.find((row) => row.Bypass === String(ids.b4))!
    expect(b4).toMatchObject({
      Limit: A.tag,
      State: 'active',
      Overdue: 'yes',
      'Requested by': 'Olive Tanager',
      'Authorized by': 'Hedda Marlowe',
      'Compensating measures': 'Operator watches TI locally every 15 min',
    })
    expect(Number(b4['Overdue h'])).toBeCloseTo(2, 1)
    const b2 = parsed.data.find((row) => row.Bypass === String(ids.b2))!
    expect(b2).toMatchObject({
      State: 'removed',
      'Bypassed h': '3.00',
      'Overdue h': '1.00',
      'Compensating measures': '',
    })
    const filtered = Papa.parse(
      (await as.manager.get(`/api/bypass-review/export?siteId=${D.siteId}`).expect(200)).text.replace(/^\uFEFF/, ''),
      { header: true, skipEmptyLines: true },
    )
    expect(filtered.data).toHaveLength(1)

    // OWASP "CSV Injection": a name that reads as a formula leaves with a quote before it; numbers stay numbers
    const olive = await ctx.db
      .selectFrom('app_user')
      .select(['id', 'display_name'])
      .where('display_name', '=', 'Olive Tanager')
      .executeTakeFirstOrThrow()
    await ctx.db
      .updateTable('app_user')
      .set({ display_name: `=cmd|' /C calc'!A0` })
      .where('id', '=', olive.id)
      .execute()
    try {
      const forged = Papa.parse<Record<string, string>>(
        (await as.manager.get('/api/bypass-review/export?format=csv').expect(200)).text.replace(/^\uFEFF/, ''),
        { header: true, skipEmptyLines: true },
      ).data.find((row) => row.Bypass === String(ids.b4))!
      expect(forged['Requested by']).toBe(`'=cmd|' /C calc'!A0`)
      expect(Number(forged['Overdue h'])).toBeCloseTo(2, 1)
    } finally {
      await ctx.db
        .updateTable('app_user')
        .set({ display_name: olive.display_name })
        .where('id', '=', olive.id)
        .execute()
    }

    const pdf = await as.manager.get('/api/bypass-review/export?format=pdf').expect(200)
    expect(pdf.headers['content-type']).toBe('application/pdf')
    expect(Buffer.from(pdf.body).subarray(0, 5).toString('latin1')).toBe('%PDF-')
  })

  it('the review is for plant managers, engineers, approvers, shift supervisors and auditors; others get 403', async () => {
    for (const who of ['manager', 'engineer', 'approver', 'supervisor', 'auditor'] as const) {
      expect((await as[who].get('/api/bypass-review')).status, who).toBe(200)
      expect((await as[who].get('/api/bypass-review/export')).status, who).toBe(200)
    }
    for (const who of ['technician', 'operator', 'admin'] as const) {
      for (const url of [
        '/api/bypass-review',
        '/api/bypass-review/export?format=csv',
        '/api/bypass-review/export?format=pdf',
        '/api/bypass-review/risk',
      ]) {
        const res = await as[who].get(url)
        expect(res.status, `${who} ${url}`).toBe(403)
      }
    }
  })
})
