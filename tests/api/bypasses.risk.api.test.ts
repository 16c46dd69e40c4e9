import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createTripTestJob } from '../../server/features/trip-tests/trip-tests.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { sifPfd, type Subsystem } from '../../shared/domain/sif-reliability.ts'
import { crewOf, DEMO_ACCOUNTS } from './helpers/agent.ts'
import { buildHeaterTrip, ACTIVATE, heaterTrip, heaterWithChannels, mvSourceTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const YEAR_H = 8760
// every demo account but the administrator
const PEOPLE = DEMO_ACCOUNTS.filter((p): p is Exclude<(typeof DEMO_ACCOUNTS)[number], 'admin'> => p !== 'admin')
type Who = (typeof PEOPLE)[number]

let app: Express
const { as, signInAll } = crewOf(() => app, PEOPLE)

async function at(iso: string) {
  ctx.clock.set(iso)
  await signInAll()
}

// each subsystem of the worked example: no common cause unless given, MTTR 0, full coverage, tested yearly
const EXACT = { beta: 0, mttrHours: 0, testIntervalMonths: 12, testCoverage: 1, missionTimeYears: 15 }

/**
 * Whole-SIF worked example (simplified equations of IEC 61508-6 Annex B / ISA-TR84.00.02): sensors 1oo2 (λDU 5e−7, β 0.1) 2.2418e−4 + logic solver
 * 1.0e−4 (given; here a 1oo1 with λDU = 2·1e−4/8 760 h) + valve 1oo1 (λDU 2e−6) 8.7600e−3 = 9.0842e−3 → SIL 2, RRF 110.1.
 * MTTR 0 and full proof-test coverage, so the simplified equations apply exactly; proof test yearly (12 × 730 h = 8 760 h).
 */
const WORKED: Subsystem[] = [
  { ...EXACT, role: 'sensor', architecture: '1oo2', lambdaDu: 5e-7, beta: 0.1 },
  { ...EXACT, role: 'logic', architecture: '1oo1', lambdaDu: 2e-4 / YEAR_H },
  { ...EXACT, role: 'final_element', architecture: '1oo1', lambdaDu: 2e-6 },
]

// simplified equations (ISA-TR84.00.02; IEC 61508-6 Annex B), MTTR terms
// omitted
const pfd1oo1 = (lambdaDu: number, ti: number) => (lambdaDu * ti) / 2
const pfd1oo2 = (lambdaDu: number, beta: number, ti: number) =>
  ((1 - beta) * lambdaDu * ti) ** 2 / 3 + (beta * lambdaDu * ti) / 2
/** The worked example's PFDavg at proof-test interval `ti` (IEC 61508-6 B.2: PFD_SIF = PFD_sensor + PFD_logic + PFD_final). */
const workedPfd = (ti: number) => pfd1oo2(5e-7, 0.1, ti) + pfd1oo1(2e-4 / YEAR_H, ti) + pfd1oo1(2e-6, ti)

/** A SIL-rated heater trip with the given subsystems and `channels` voted thermocouples, put in service (two approvals). */
async function silLimit(sil: 1 | 2 | 3, subsystems: Subsystem[], channels = 1) {
  const eng = as.engineer
  const { proc, instruments, n } = await heaterWithChannels(eng, channels, 2)
  const limit = await eng.created(
    '/api/limits',
    heaterTrip(
      proc.id,
      instruments.map((i) => i.id),
      `TZHH-S${n}`,
      sil,
      subsystems,
    ),
  )
  await activateLimit({ eng, approver: as.approver, approver2: as.approver2, tech: as.technician }, limit)
  return { limit: limit as { id: number; tag: string }, instruments }
}

interface RiskRow {
  limitId: number
  tag: string
  targetSil: number
  testStatus: string
  bypassedHours: number
  channelBypassedHours: number
  actualIntervalHours: number | null
  design: { pfd: number; rrf: number; band: number | 'none' }
  effective: { pfd: number; rrf: number; band: number | 'none' }
  belowTarget: boolean
  designBelowTarget: boolean
}
interface Risk {
  period: { from: string; to: string; hours: number }
  items: RiskRow[]
  caution: string
}
const risk = async (query: string, who: Who = 'manager') =>
  (await as[who].get(`/api/bypass-review/risk${query}`).expect(200)).body as Risk
const row = (r: Risk, limitId: number) => r.items.find((i) => i.limitId === limitId)!
const rel = (a: number, b: number) => Math.abs(a / b - 1)

let worked: Awaited<ReturnType<typeof silLimit>>
let voted: Awaited<ReturnType<typeof silLimit>>
let factory: { id: number; tag: string }
let plain: { id: number }

beforeAll(async () => {
  app = createApp(ctx)
  await at('2026-08-03T06:00:00Z')
  worked = await silLimit(2, WORKED)
  voted = await silLimit(2, WORKED, 2)
  const built = await buildHeaterTrip(as.engineer, { sil: 1 })
  await activateLimit(
    { eng: as.engineer, approver: as.approver, approver2: as.approver2, tech: as.technician },
    built.limit,
  )
  factory = built.limit
  const notSil = await buildHeaterTrip(as.engineer)
  await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, notSil.limit)
  plain = notSil.limit

  // a passing yearly proof test of the worked-example function: due 3 Aug 2027
  const test = await as.technician.created(
    '/api/trip-tests',
    mvSourceTest(worked.limit.id, {
      performedAt: '2026-08-03T05:30:00Z',
      finalElementOk: true,
      latchHeld: true,
      asFound: 781,
    }),
  )
  expect(test.passed).toBe(true)
  await as.technician.post(`/api/trip-tests/${test.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)

  // 08:00 → 14:00: the whole worked-example function bypassed, and one of the two sensor channels of its voted twin
  const whole = await as.operator.created('/api/bypasses', {
    limitId: worked.limit.id,
    reason: 'Burner front work',
    plannedStart: '2026-08-03T08:00:00Z',
    plannedEnd: '2026-08-03T14:00:00Z',
    predefinedMeasuresConfirmed: true,
  })
  const channel = await as.operator.created('/api/bypasses', {
    limitId: voted.limit.id,
    reason: 'Thermocouple A replacement',
    plannedStart: '2026-08-03T08:00:00Z',
    plannedEnd: '2026-08-03T14:00:00Z',
    predefinedMeasuresConfirmed: true,
    channelInstrumentId: voted.instruments[0].id,
  })
  for (const b of [whole, channel])
    await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
  await at('2026-08-03T08:00:00Z')
  for (const b of [whole, channel]) await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
  await at('2026-08-03T14:00:00Z')
  for (const b of [whole, channel])
    await as.operator
      .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
  await at('2026-08-04T06:00:00Z')
}, 240_000)

describe('risk erosion of safety instrumented functions (GET /api/bypass-review/risk)', () => {
  it('design PFDavg: the sum of the subsystems, equal to the published worked example (whole-SIF example, IEC 61508-6 Annex B simplified equations)', async () => {
    const r = await risk('?from=2026-08-01T00:00:00Z&to=2026-08-03T00:00:00Z')
    const w = row(r, worked.limit.id)
    expect(w.design.pfd).toBe(sifPfd(WORKED))
    // hand computation with the simplified equations: 1oo2 ((1−β)λDU·TI)²/3 + β·λDU·TI/2, 1oo1 λDU·TI/2
    expect(pfd1oo2(5e-7, 0.1, YEAR_H)).toBeCloseTo(2.2418e-4, 8)
    expect(rel(w.design.pfd, workedPfd(YEAR_H))).toBeLessThan(1e-12)
    // the published figures: 9.0842e−3 → SIL 2, RRF 110.1
    expect(w.design.pfd).toBeCloseTo(9.0842e-3, 7)
    expect(w.design.rrf).toBeCloseTo(110.1, 1)
    expect(w.design).toMatchObject({ band: 2 })
    expect(w).toMatchObject({ targetSil: 2, designBelowTarget: false, belowTarget: false, bypassedHours: 0 })
    // no bypass and the test up to date in this period: effective = design
    expect(w.effective.pfd).toBe(w.design.pfd)
    // only SIL-rated limits are listed
    expect(r.items.map((i) => i.limitId)).not.toContain(plain.id)
    expect(r.caution).toContain('hardware fault tolerance and systematic capability are not assessed')
    expect(r.caution).toContain('Low demand mode only; not a SIL verification')
    expect(r.caution).toContain(
      'no substitute for the safety requirements specification or a functional safety assessment',
    )
  })

  it("design PFDavg of the factory's subsystems, by hand with the IEC 61508-6 Annex B general forms and partial proof-test coverage", async () => {
    const r = await risk('?from=2026-08-01T00:00:00Z&to=2026-08-03T00:00:00Z')
    const f = row(r, factory.id)
    // hidden time of an undetected failure with coverage C, interval TI and mission time T_full (reference "Partial
    // proof testing"):
    // C·TI/k + (1 − C)·T_full/k; 1oo1: PFD = λDU·(hidden(2) + MRT) (IEC 61508-6 Ed. 2 1oo1 form, λDD = 0)
    const TI = 12 * 730
    const T_FULL = 15 * YEAR_H
    const hidden = (c: number, k: number) => (c * TI) / k + ((1 - c) * T_FULL) / k
    const sensor = 5e-7 * (hidden(0.9, 2) + 8) // 5e−7 · (3 942 + 6 570 + 8) = 5.2600e−3
    const logic = 1e-8 * (hidden(1, 2) + 8) // 1e−8 · 4 388 = 4.388e−5
    // 1oo2: PFD = 2·((1−β)·λDU)²·t_CE·t_GE + β·λDU·(hidden(2) + MRT), t_CE = hidden(2) + MRT, t_GE = hidden(3) + MRT
    const tCE = hidden(0.7, 2) + 24 // 22 800 h
    const tGE = hidden(0.7, 3) + 24 // 15 208 h
    const final = 2 * (0.9 * 2e-6) ** 2 * tCE * tGE + 0.1 * 2e-6 * tCE // 2.24689e−3 + 4.5600e−3
    expect(sensor).toBeCloseTo(5.26e-3, 10)
    expect(logic).toBeCloseTo(4.388e-5, 12)
    expect(final).toBeCloseTo(6.80689e-3, 8)
    expect(rel(f.design.pfd, sensor + logic + final)).toBeLessThan(1e-12)
    expect(f.design.pfd).toBeCloseTo(1.21108e-2, 6)
    // lower bounds inclusive: 1.21e−2 lies in the SIL 1 band (≥ 1e−2 to < 1e−1), meeting its SIL 1 target
    expect(f).toMatchObject({ targetSil: 1, design: { band: 1 }, designBelowTarget: false, belowTarget: false })
  })

  it('bypassed hours raise the effective PFDavg by the bypassed fraction: effective = design + f·(1 − design)', async () => {
    // a day holding the 6 h bypass: f ≈ 1/4
    const day = await risk('?from=2026-08-03T00:00:00Z&to=2026-08-04T00:00:00Z')
    expect(day.period.hours).toBe(24)
    const w = row(day, worked.limit.id)
    // the clock runs on from each time set: allow the seconds the test itself takes
    expect(w.bypassedHours).toBeGreaterThan(5.95)
    expect(w.bypassedHours).toBeLessThan(6.05)
    const f = w.bypassedHours / 24
    expect(rel(w.effective.pfd, w.design.pfd + f * (1 - w.design.pfd))).toBeLessThan(1e-12)
    expect(w.effective.pfd).toBeCloseTo(0.2568, 3)
    expect(w.effective.band).toBe('none')
    expect(w.belowTarget).toBe(true)
    expect(w.designBelowTarget).toBe(false)

    // thirty days holding it: f ≈ 6/720, effective ≈ 1.73e−2, the SIL 1 band, below the SIL 2 target
    const month = await risk('?from=2026-07-05T00:00:00Z&to=2026-08-04T00:00:00Z')
    const m = row(month, worked.limit.id)
    expect(month.period.hours).toBe(720)
    expect(rel(m.effective.pfd, m.design.pfd + (m.bypassedHours / 720) * (1 - m.design.pfd))).toBeLessThan(1e-12)
    expect(m.effective.pfd).toBeCloseTo(1.734e-2, 4)
    expect(m).toMatchObject({ effective: { band: 1 }, belowTarget: true })
  })

  it('a bypassed single channel degrades the voting (1oo2 → 1oo1 sensors) instead of defeating the function', async () => {
    const day = await risk('?from=2026-08-03T00:00:00Z&to=2026-08-04T00:00:00Z')
    const v = row(day, voted.limit.id)
    expect(v.bypassedHours).toBe(0)
    expect(v.channelBypassedHours).toBeGreaterThan(5.95)
    expect(v.channelBypassedHours).toBeLessThan(6.05)
    const f = v.channelBypassedHours / 24
    // during the bypass: sensors 1oo1 λDU·TI/2 = 2.19e−3 in place of the 1oo2 2.2418e−4
    const during = pfd1oo1(5e-7, YEAR_H) + pfd1oo1(2e-4 / YEAR_H, YEAR_H) + pfd1oo1(2e-6, YEAR_H)
    expect(rel(v.effective.pfd, (1 - f) * v.design.pfd + f * during)).toBeLessThan(1e-9)
    expect(v.effective.pfd).toBeGreaterThan(v.design.pfd)
    expect(v).toMatchObject({ effective: { band: 2 }, belowTarget: false })
  })

  it('an overdue proof test lengthens the interval to the time since the last passing full test', async () => {
    // due 3 Aug 2027, grace 30 days (docs/conventions.md, "Site policies", default: 10 % of the interval, at most 30
    // days, common practice) → overdue from 3 Sep 2027
    await at('2027-10-01T06:00:00Z')
    await createTripTestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
    const r = await risk('?from=2027-09-01T00:00:00Z&to=2027-10-01T00:00:00Z')
    const w = row(r, worked.limit.id)
    expect(w.testStatus).toBe('overdue')
    // from the day of the last pass (3 Aug 2026) to now: 424 days and 6 h
    expect(w.actualIntervalHours).not.toBeNull()
    expect(w.actualIntervalHours!).toBeGreaterThan(424 * 24 + 6 - 0.1)
    expect(w.actualIntervalHours!).toBeLessThan(424 * 24 + 6 + 0.1)
    expect(w.bypassedHours).toBe(0)
    expect(rel(w.effective.pfd, workedPfd(w.actualIntervalHours!))).toBeLessThan(1e-12)
    expect(w.effective.pfd).toBeGreaterThan(w.design.pfd)
    expect(w.design.pfd).toBeCloseTo(9.0842e-3, 7)
    // 10 182 h instead of 8 760 h: ≈ 1.056e−2, out of the SIL 2 band
    expect(w.effective.pfd).toBeCloseTo(1.0559e-2, 5)
    expect(w).toMatchObject({ effective: { band: 1 }, belowTarget: true, designBelowTarget: false })
  })

  it('a never-tested function counts its untested time from commissioning, else from its entry in the register', async () => {
    await at('2027-10-01T06:00:00Z')
    await createTripTestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
    const period = '?from=2027-09-01T00:00:00Z&to=2027-10-01T00:00:00Z'
    const before = row(await risk(period), factory.id)
    expect(before.testStatus).toBe('never_tested')
    // entered 3 Aug 2026 06:00 UTC, read 1 Oct 2027 06:00 UTC: 424 days = 10 176 h (by hand)
    expect(before.actualIntervalHours!).toBeGreaterThan(10_176 - 0.1)
    expect(before.actualIntervalHours!).toBeLessThan(10_176 + 0.1)
    await as.engineer
      .put(`/api/demands/assumptions/${factory.id}`, {
        assumedDemandRatePerYear: null,
        assumedSpuriousRatePerYear: null,
        commissionedAt: '2026-01-01',
        reason: 'Validation record of the heater trip',
      })
      .expect(200)
    // commissioned 1 Jan 2026: 365 + 273 days and 6 h to 1 Oct 2027 06:00 = 15 318 h (by hand)
    const after = row(await risk(period), factory.id)
    expect(after.actualIntervalHours!).toBeGreaterThan(15_318 - 0.1)
    expect(after.actualIntervalHours!).toBeLessThan(15_318 + 0.1)
  })

  it('the same roles as the review read it; a period that ends before it starts is refused', async () => {
    for (const who of ['engineer', 'approver', 'supervisor', 'auditor'] as const)
      expect((await as[who].get('/api/bypass-review/risk')).status, who).toBe(200)
    for (const who of ['technician', 'operator'] as const)
      expect((await as[who].get('/api/bypass-review/risk')).status, who).toBe(403)
    const res = await as.manager.get('/api/bypass-review/risk?from=2027-09-02T00:00:00Z&to=2027-09-01T00:00:00Z')
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })
})
