import { evaluate } from 'mathjs'
import { describe, expect, it } from 'vitest'
import {
  compareToTarget,
  DEFAULT_DEGRADED_ARCHITECTURE,
  pfdWarnings,
  SIMPLIFIED_LAMBDA_T_MAX,
  subsystemPfdDetail,
  effectivePfd,
  rrf,
  sifPfd,
  silBand,
  subsystemPfd,
  type Architecture,
  type SilBand,
  type Subsystem,
} from '../../../shared/domain/sif-reliability.ts'

// Source of every check value below unless noted: values computed independently of this code from the simplified
// equations of IEC 61508-6 Annex B / ISA-TR84.00.02 (1oo1 variants, partial proof testing, a whole-SIF example, the
// SIL bands of IEC 61508-1 Table 2); the three 69 FIT rows reproduce a published device safety manual.

/** Agrees with a published value to the digits printed there. */
function expectDigits(actual: number, published: string): void {
  const digits = published
    .replace(/e.*$/i, '')
    .replace(/[^0-9]/g, '')
    .replace(/^0+/, '').length
  expect(Number(actual.toPrecision(digits))).toBe(Number(published))
}

function sub(overrides: Partial<Subsystem>): Subsystem {
  return {
    role: 'sensor',
    architecture: '1oo1',
    lambdaDu: 2e-6,
    beta: 0,
    mttrHours: 0,
    testIntervalMonths: 12,
    testCoverage: 1,
    missionTimeYears: null,
    ...overrides,
  }
}

describe('subsystemPfd: simplified equations, MTTR terms omitted', () => {
  // λDU = 2.0e−6 h⁻¹, TI = 8 760 h (12 months × 730 h)
  it.each<[Architecture, number, string, string, SilBand]>([
    ['1oo1', 0, '8.7600e-3', '114.2', 2],
    ['1oo2', 0.1, '9.5888e-4', '1042.9', 3],
    ['1oo2', 0.05, '5.3034e-4', '1885.6', 3],
    ['1oo2', 0, '1.0232e-4', '9773.6', 3],
    ['2oo2', 0, '1.7520e-2', '57.1', 1],
    ['2oo3', 0.1, '1.1246e-3', '889.2', 2],
    ['2oo3', 0, '3.0695e-4', '3257.9', 3],
    ['1oo3', 0.1, '8.7698e-4', '1140.3', 3],
  ])('%s, β %s → PFDavg %s, RRF %s, SIL %s', (architecture, beta, pfd, riskReduction, band) => {
    const value = subsystemPfd(sub({ architecture, beta }))
    expectDigits(value, pfd)
    expectDigits(rrf(value), riskReduction)
    expect(silBand(value)).toBe(band)
  })

  // 1oo1 variants; 69 FIT = 6.9e−8 h⁻¹; TI in months (× 730 h): 8 760 h = 12, 17 520 = 24, 4 380 = 6, 87 600 = 120, 2 190 = 3
  it.each<[number, number, string, string]>([
    [1e-6, 12, '4.3800e-3', '228.3'],
    [5e-7, 12, '2.1900e-3', '456.6'],
    [1e-6, 24, '8.7600e-3', '114.2'],
    [1e-6, 6, '2.1900e-3', '456.6'],
    [6.9e-8, 120, '3.0222e-3', '330.9'],
    [6.9e-8, 12, '3.0222e-4', '3308.8'],
    [6.9e-8, 3, '7.5555e-5', '13235.4'],
    [2.28e-7, 12, '9.9864e-4', '1001.4'],
  ])('1oo1 λDU %s, %s months → %s (RRF %s)', (lambdaDu, testIntervalMonths, pfd, riskReduction) => {
    const value = subsystemPfd(sub({ lambdaDu, testIntervalMonths }))
    expectDigits(value, pfd)
    expectDigits(rrf(value), riskReduction)
  })

  it('puts 2.28e−7 h⁻¹ at 1 year just inside the SIL 3 band', () => {
    expect(silBand(subsystemPfd(sub({ lambdaDu: 2.28e-7 })))).toBe(3)
  })

  // Independent cross-check: the printed simplified equations (sif-reliability.md table) evaluated by mathjs,
  // against our IEC 61508-6 group-time implementation with MTTR = 0 and full coverage.
  const printed: Record<Exclude<Architecture, '1oo2D'>, string> = {
    '1oo1': 'l * T / 2',
    '1oo2': '((1 - b) * l * T)^2 / 3 + b * l * T / 2',
    '2oo2': 'l * T',
    '2oo3': '((1 - b) * l * T)^2 + b * l * T / 2',
    '1oo3': '((1 - b) * l * T)^3 / 4 + b * l * T / 2',
  }
  const grid: [Exclude<Architecture, '1oo2D'>, number, number, number][] = []
  for (const architecture of Object.keys(printed) as Exclude<Architecture, '1oo2D'>[]) {
    for (const [l, b, months] of [
      [1e-7, 0.02, 3],
      [3.3e-6, 0.2, 36],
      [5e-6, 0, 24],
    ] as const)
      grid.push([architecture, l, b, months])
  }
  it.each(grid)('%s, λDU %s, β %s, %s months matches the printed equation', (architecture, l, b, months) => {
    const expected = evaluate(printed[architecture], { l, b, T: months * 730 }) as number
    const actual = subsystemPfd(sub({ architecture, lambdaDu: l, beta: b, testIntervalMonths: months }))
    expect(Math.abs(actual / expected - 1)).toBeLessThan(1e-12)
  })
})

describe('subsystemPfd: IEC 61508-6 Ed. 2 form with MTTR and detected failures', () => {
  it('1oo1, λDU 1e−6, λDD 4e−6, MRT = MTTR = 8 h, TI 8 760 h → 4.420e−3', () => {
    expectDigits(subsystemPfd(sub({ lambdaDu: 1e-6, lambdaDd: 4e-6, mttrHours: 8 })), '4.420e-3')
  })

  it('MTTR adds λDU·MRT to a 1oo1 with no detected failures (differs from 4.412e−3, the TI/2-only form)', () => {
    const withRepair = subsystemPfd(sub({ lambdaDu: 1e-6, lambdaDd: 4e-6, mttrHours: 8 }))
    expect(Number(withRepair.toPrecision(4))).not.toBe(4.412e-3)
  })

  // IEC form, 1oo1, T1 = 1 y, MRT = MTTR = 8 h: λDU = λD·(1 − DC), λDD = λD·DC
  const dcTable: [number, number, string][] = [
    [5e-7, 0, '2.19e-3'],
    [5e-7, 0.6, '8.80e-4'],
    [5e-7, 0.9, '2.23e-4'],
    [5e-7, 0.99, '2.59e-5'],
    [1e-6, 0, '4.39e-3'],
    [1e-6, 0.6, '1.76e-3'],
    [1e-6, 0.9, '4.46e-4'],
    [1e-6, 0.99, '5.18e-5'],
    [5e-6, 0, '2.19e-2'],
    [5e-6, 0.6, '8.80e-3'],
    [5e-6, 0.9, '2.23e-3'],
    [5e-6, 0.99, '2.59e-4'],
  ]
  it.each(dcTable)('1oo1, λD %s, DC %s → %s', (lambdaD, dc, pfd) => {
    expectDigits(subsystemPfd(sub({ lambdaDu: lambdaD * (1 - dc), lambdaDd: lambdaD * dc, mttrHours: 8 })), pfd)
  })

  it('1oo2, λD 1e−6, DC 60 %, β 10 %, βD 5 %, T1 1 y, MRT = MTTR = 8 h → 1.793e−4', () => {
    expectDigits(
      subsystemPfd(sub({ architecture: '1oo2', lambdaDu: 4e-7, lambdaDd: 6e-7, beta: 0.1, betaD: 0.05, mttrHours: 8 })),
      '1.793e-4',
    )
  })

  it('the same 1oo2 by the simplified formula (λDU 4e−7, β 0.1, no MTTR) → 1.785e−4', () => {
    expectDigits(subsystemPfd(sub({ architecture: '1oo2', lambdaDu: 4e-7, beta: 0.1 })), '1.785e-4')
  })

  it('βD defaults to β', () => {
    const s = sub({ architecture: '1oo2', lambdaDu: 4e-7, lambdaDd: 6e-7, beta: 0.1, mttrHours: 8 })
    expect(subsystemPfd(s)).toBe(subsystemPfd({ ...s, betaD: 0.1 }))
    expect(subsystemPfd(s)).not.toBe(subsystemPfd({ ...s, betaD: 0.05 }))
  })
})

describe('subsystemPfd: partial proof-test coverage', () => {
  // PFDavg ≈ C·λDU·TI/2 + (1 − C)·λDU·T_full/2, λDU 2e−6, TI 8 760 h
  it.each<[number, number | null, string, string, SilBand]>([
    [1, null, '8.7600e-3', '114.2', 2],
    [0.9, 10, '1.6644e-2', '60.1', 1],
    [0.7, 10, '3.2412e-2', '30.9', 1],
    [0.8, 5, '1.5768e-2', '63.4', 1],
  ])('coverage %s, mission %s y → %s (RRF %s, SIL %s)', (testCoverage, missionTimeYears, pfd, riskReduction, band) => {
    const value = subsystemPfd(sub({ testCoverage, missionTimeYears }))
    expectDigits(value, pfd)
    expectDigits(rrf(value), riskReduction)
    expect(silBand(value)).toBe(band)
  })

  it('needs a mission time below full coverage', () => {
    expect(() => subsystemPfd(sub({ testCoverage: 0.9, missionTimeYears: null }))).toThrow(RangeError)
    expect(() => subsystemPfd(sub({ testCoverage: 0.9, missionTimeYears: 0 }))).toThrow(RangeError)
    expect(() => subsystemPfd(sub({ testCoverage: 1, missionTimeYears: null }))).not.toThrow()
  })

  it('never hides missed failures for less than the test interval (mission shorter than TI)', () => {
    // mission 0.5 y < TI 1 y: T_full is taken as TI, so the result equals full coverage
    expect(subsystemPfd(sub({ testCoverage: 0.5, missionTimeYears: 0.5 }))).toBe(subsystemPfd(sub({})))
  })

  // Independent cross-check (computed here): time-average over the mission of the rare-event unavailability,
  // q(t) = C·λ·(t mod TI) + (1 − C)·λ·t, combined per voting (1oo1: q, 2oo2: 2q, 1oo2: q², 2oo3: 3q², 1oo3: q³),
  // by midpoint integration. 1oo1 and 2oo2 must agree; the voted forms must be conservative (not below the average)
  // and within 30 %, see docs/domain/sif-reliability.md.
  function averaged(
    architecture: Exclude<Architecture, '1oo2D'>,
    lambda: number,
    c: number,
    ti: number,
    mission: number,
  ): number {
    const steps = 200_000
    const dt = mission / steps
    let sum = 0
    for (let i = 0; i < steps; i++) {
      const t = (i + 0.5) * dt
      const q = c * lambda * (t % ti) + (1 - c) * lambda * t
      sum += { '1oo1': q, '2oo2': 2 * q, '1oo2': q * q, '2oo3': 3 * q * q, '1oo3': q ** 3 }[architecture]
    }
    return sum / steps
  }
  const cases: [Exclude<Architecture, '1oo2D'>, number][] = []
  for (const architecture of ['1oo1', '2oo2', '1oo2', '2oo3', '1oo3'] as const) {
    for (const c of [0.9, 0.6]) cases.push([architecture, c])
  }
  it.each(cases)('%s, coverage %s against the time average', (architecture, testCoverage) => {
    const model = subsystemPfd(sub({ architecture, testCoverage, missionTimeYears: 10 }))
    const reference = averaged(architecture, 2e-6, testCoverage, 8760, 87600)
    if (architecture === '1oo1' || architecture === '2oo2') {
      expect(Math.abs(model / reference - 1)).toBeLessThan(1e-6)
    } else {
      expect(model).toBeGreaterThanOrEqual(reference)
      expect(model / reference).toBeLessThan(1.3)
    }
  })
})

describe('subsystemPfd: input checks', () => {
  it.each<[string, Partial<Subsystem>]>([
    ['negative λDU', { lambdaDu: -1e-6 }],
    ['β above 1', { beta: 1.1 }],
    ['negative β', { beta: -0.1 }],
    ['coverage above 1', { testCoverage: 1.2 }],
    ['negative MTTR', { mttrHours: -1 }],
    ['zero interval', { testIntervalMonths: 0 }],
    ['unknown architecture', { architecture: '3oo4' as Architecture }],
  ])('rejects %s', (_name, overrides) => {
    expect(() => subsystemPfd(sub(overrides))).toThrow(RangeError)
  })

  it('gives 0 for a subsystem without dangerous failures', () => {
    expect(subsystemPfd(sub({ lambdaDu: 0 }))).toBe(0)
    expect(rrf(0)).toBe(Infinity)
  })
})

describe('sifPfd', () => {
  // Whole-SIF example: sensors 1oo2 (λDU 5e−7, β 0.1) 2.2418e−4 + logic solver 1.0e−4 (given) + valve 1oo1 (λDU 2e−6)
  // 8.7600e−3 = 9.0842e−3 → SIL 2, RRF 110.1. The given logic PFD is entered as a 1oo1 whose λDU = 2·PFD/TI
  // (the reference's "required interval" relation TI = 2·PFD/λDU, rearranged).
  const sensors = sub({ role: 'sensor', architecture: '1oo2', lambdaDu: 5e-7, beta: 0.1 })
  const logic = sub({ role: 'logic', lambdaDu: (2 * 1e-4) / 8760 })
  const valve = sub({ role: 'final_element', lambdaDu: 2e-6 })

  it('sums the subsystems', () => {
    expectDigits(subsystemPfd(sensors), '2.2418e-4')
    expectDigits(subsystemPfd(logic), '1.0000e-4')
    const total = sifPfd([sensors, logic, valve])
    expectDigits(total, '9.0842e-3')
    expectDigits(rrf(total), '110.1')
    expect(silBand(total)).toBe(2)
  })

  it('is 0 for no subsystems', () => {
    expect(sifPfd([])).toBe(0)
  })
})

describe('silBand and rrf', () => {
  // SIL bands, low demand: lower bound inclusive, upper exclusive (IEC 61508-1 Table 2 / IEC 61511-1 Table 4, from memory
  // in the reference; boundary check values listed there). 9.9e−6 is outside the table: we answer 4 (no claim beyond 4).
  it.each<[number, SilBand]>([
    [1.0e-3, 2],
    [9.99e-3, 2],
    [1.0e-2, 1],
    [0.0999, 1],
    [0.1, 'none'],
    [1.0e-4, 3],
    [1.0e-5, 4],
    [9.9e-6, 4],
    // the other side of each edge (computed)
    [9.99999e-4, 3],
    [9.99999e-5, 4],
    [9.99999e-3, 2],
    [0.0999999, 1],
    [0.5, 'none'],
    [1, 'none'],
    [0, 4],
  ])('PFDavg %s → %s', (pfd, band) => {
    expect(silBand(pfd)).toBe(band)
  })

  it.each<[number, SilBand]>([
    [10, 'none'],
    [50, 1],
    [100, 1],
    [101, 2],
    [1000, 2],
    [1001, 3],
  ])('RRF %s → %s', (riskReduction, band) => {
    expect(silBand(1 / riskReduction)).toBe(band)
  })

  it('treats a computed value that misses an edge by binary noise as the edge', () => {
    // λDU 1e−7 at 20 000 h is the reference's "required interval for a target 1e−3" → exactly the SIL 2 lower bound
    const pfd = subsystemPfd(sub({ lambdaDu: 1e-7 }), { testIntervalHours: 20_000 })
    expect(Math.abs(pfd - 1e-3)).toBeLessThan(1e-15)
    expect(silBand(pfd)).toBe(2)
    expect(silBand(0.0009999999999999998)).toBe(2)
  })

  it.each([-1e-3, Number.NaN])('rejects PFDavg %s', (pfd) => {
    expect(() => silBand(pfd)).toThrow(RangeError)
    expect(() => rrf(pfd)).toThrow(RangeError)
  })
})

describe('compareToTarget', () => {
  it.each<[1 | 2 | 3 | 4, number, boolean]>([
    [2, 9.0842e-3, true], // whole-SIF example, SIL 2 band
    [3, 9.0842e-3, false],
    [2, 1e-2, false], // edge: 1e−2 is SIL 1
    [2, 9.99e-3, true],
    [3, 1e-3, false], // edge: 1e−3 is SIL 2
    [1, 0.0999, true],
    [1, 0.1, false],
    [4, 9.9e-6, true],
  ])('target SIL %s, PFDavg %s → met %s', (targetSil, pfd, met) => {
    const result = compareToTarget(targetSil, pfd)
    expect(result.meetsTarget).toBe(met)
    expect(result.requiredPfdBelow).toBe([0.1, 0.01, 0.001, 0.0001][targetSil - 1])
    expect(result.marginFactor > 1).toBe(met)
  })

  it('explains the comparison', () => {
    const r = compareToTarget(2, 9.0842e-3)
    expect(r.band).toBe(2)
    expect(r.explanation).toBe('PFDavg 0.00908 lies in the SIL 2 band; SIL 2 needs PFDavg < 0.01 → target met')
  })

  it('rejects an unknown target', () => {
    expect(() => compareToTarget(5 as 4, 1e-3)).toThrow(RangeError)
  })
})

describe('effectivePfd', () => {
  const valve = sub({ role: 'final_element', lambdaDu: 2e-6 }) // 8.76e−3 at 12 months
  const sensors2oo3 = sub({ role: 'sensor', architecture: '2oo3', beta: 0.1 }) // 1.1246e−3 at 12 months

  it('equals the design PFD with design intervals and no bypass', () => {
    const r = effectivePfd({ subsystems: [sensors2oo3, valve], bypassedHours: 0, periodHours: 8760 })
    expect(r.pfd).toBe(sifPfd([sensors2oo3, valve]))
    expect(r.designPfd).toBe(r.actualIntervalPfd)
  })

  it('uses the actual test interval per role', () => {
    // valve actually tested every 17 520 h: 1oo1 λDU 1e−6 → 8.7600e−3 (1oo1 variants table); design 12 months → 4.3800e−3
    const r = effectivePfd({
      subsystems: [sub({ role: 'final_element', lambdaDu: 1e-6 })],
      actualIntervalHoursByRole: { final_element: 17_520 },
      bypassedHours: 0,
      periodHours: 8760,
    })
    expectDigits(r.designPfd, '4.3800e-3')
    expectDigits(r.pfd, '8.7600e-3')
    expect(r.subsystems[0].actualIntervalHours).toBe(17_520)
  })

  it('time-weights a whole-function bypass as unavailability 1', () => {
    // 87.6 h of 8 760 h bypassed (f = 0.01): 0.99 × 8.76e−3 + 0.01 × 1 = 1.86724e−2 (computed by hand)
    const r = effectivePfd({ subsystems: [valve], bypassedHours: 87.6, periodHours: 8760 })
    expect(r.bypassFraction).toBeCloseTo(0.01, 15)
    expectDigits(r.pfd, '1.86724e-2')
    expect(silBand(r.pfd)).toBe(1)
    expect(compareToTarget(2, r.designPfd).meetsTarget).toBe(true)
    expect(compareToTarget(2, r.pfd).meetsTarget).toBe(false)
  })

  it('degrades the voting of a single bypassed channel instead of losing the function', () => {
    // 2oo3 sensors with one channel defeated act as 2oo2 (2oo2 at λDU 2e−6, 12 months: 1.7520e−2); f = 0.01:
    // 0.99 × (1.1246e−3 + 8.76e−3) + 0.01 × (1.7520e−2 + 8.76e−3) = 9.78575e−3 + 2.628e−4 = 1.004855e−2 (computed from the table values)
    const r = effectivePfd({
      subsystems: [sensors2oo3, valve],
      bypassedHours: 87.6,
      periodHours: 8760,
      bypassedSingleChannel: { role: 'sensor' },
    })
    expect(r.subsystems[0].degradedArchitecture).toBe('2oo2')
    expectDigits(r.subsystems[0].degradedPfd ?? 0, '1.7520e-2')
    expectDigits(r.pfd, '1.0049e-2')
    const whole = effectivePfd({ subsystems: [sensors2oo3, valve], bypassedHours: 87.6, periodHours: 8760 })
    expect(r.pfd).toBeLessThan(whole.pfd)
  })

  it('accepts logic that re-votes 2oo3 → 1oo2 on bypass', () => {
    // 1oo2 at λDU 2e−6, β 0.1, 12 months: 9.5888e−4 (table)
    const r = effectivePfd({
      subsystems: [sensors2oo3],
      bypassedHours: 876,
      periodHours: 8760,
      bypassedSingleChannel: { role: 'sensor', degradedArchitecture: '1oo2' },
    })
    expectDigits(r.subsystems[0].degradedPfd ?? 0, '9.5888e-4')
    expectDigits(r.pfd, `${(0.9 * 1.1246e-3 + 0.1 * 9.5888e-4).toPrecision(4)}`)
  })

  // Expected values from the reference's check table (λDU 2e−6, 12 months): 1oo1 8.7600e−3, 2oo2 1.7520e−2,
  // 1oo2 (β 0.1) 9.5888e−4; a lost subsystem is unavailable (1).
  it.each<[Architecture, Architecture | 'lost', string]>([
    ['1oo2', '1oo1', '8.7600e-3'],
    ['2oo3', '2oo2', '1.7520e-2'],
    ['1oo3', '1oo2', '9.5888e-4'],
    ['1oo2D', '1oo1', '8.7600e-3'],
    ['2oo2', 'lost', '1'],
    ['1oo1', 'lost', '1'],
  ])('defeating one channel of %s leaves %s (PFDavg %s)', (architecture, degraded, published) => {
    expect(DEFAULT_DEGRADED_ARCHITECTURE[architecture]).toBe(degraded)
    const r = effectivePfd({
      subsystems: [sub({ architecture, beta: 0.1 })],
      bypassedHours: 8760,
      periodHours: 8760,
      bypassedSingleChannel: { role: 'sensor' },
    })
    expectDigits(r.pfd, published)
  })

  it('1oo2 with a channel bypassed all period equals the 1oo1 figure 8.7600e−3', () => {
    const r = effectivePfd({
      subsystems: [sub({ architecture: '1oo2', beta: 0.1 })],
      bypassedHours: 8760,
      periodHours: 8760,
      bypassedSingleChannel: { role: 'sensor' },
    })
    expectDigits(r.pfd, '8.7600e-3')
  })

  it.each<[string, number, number]>([
    ['zero period', 0, 0],
    ['negative bypass', -1, 8760],
    ['more bypass than period', 8761, 8760],
  ])('rejects %s', (_name, bypassedHours, periodHours) => {
    expect(() => effectivePfd({ subsystems: [valve], bypassedHours, periodHours })).toThrow(RangeError)
  })

  it('rejects a single-channel bypass of a role the function does not have', () => {
    expect(() =>
      effectivePfd({
        subsystems: [valve],
        bypassedHours: 1,
        periodHours: 10,
        bypassedSingleChannel: { role: 'logic' },
      }),
    ).toThrow(RangeError)
  })
})

describe('large λDU·T1: never above 1, exact time average, warning', () => {
  // 2oo2, λDU 2e−5 /h, T1 120 months (87 600 h): the simplified λDU·T1 gives 1.752, not a probability.
  // The exact time average of the unavailability of two channels in series, each failing with exp(−λt), over T:
  // 1 − (1 − e^(−2λT)) / (2λT) (standard reliability algebra: ∫₀ᵀ (1 − e^(−2λt)) dt / T; from memory),
  // evaluated here by mathjs, not by the code under test.
  const bigTwo = sub({ architecture: '2oo2', lambdaDu: 2e-5, testIntervalMonths: 120 })

  it('reports 2oo2, λDU 2e−5, 120 months at the exact average, below 1, with a warning', () => {
    const expected = evaluate('1 - (1 - exp(-2 * l * T)) / (2 * l * T)', { l: 2e-5, T: 87600 }) as number
    const d = subsystemPfdDetail(bigTwo)
    expect(d.pfd).toBeLessThanOrEqual(1)
    expect(d.method).toBe('exact')
    expect(Math.abs(d.pfd / expected - 1)).toBeLessThan(1e-6)
    expect(d.warning).toMatch(/λDU·T1 = 1\.75 exceeds 0\.1/)
    expect(pfdWarnings([bigTwo])).toHaveLength(1)
  })

  it('1oo1 above the threshold matches 1 − (1 − e^(−λT)) / (λT)', () => {
    const expected = evaluate('1 - (1 - exp(-l * T)) / (l * T)', { l: 1e-5, T: 43800 }) as number
    expect(Math.abs(subsystemPfd(sub({ lambdaDu: 1e-5, testIntervalMonths: 60 })) / expected - 1)).toBeLessThan(1e-6)
  })

  it('1oo2 (β 0) above the threshold matches the time average of (1 − e^(−λt))²', () => {
    // ∫₀ᵀ (1 − e^(−λt))² dt / T = 1 − 2(1 − e^(−λT))/(λT) + (1 − e^(−2λT))/(2λT)
    const expected = evaluate('1 - 2 * (1 - exp(-l * T)) / (l * T) + (1 - exp(-2 * l * T)) / (2 * l * T)', {
      l: 1e-5,
      T: 43800,
    }) as number
    const actual = subsystemPfd(sub({ architecture: '1oo2', lambdaDu: 1e-5, testIntervalMonths: 60 }))
    expect(Math.abs(actual / expected - 1)).toBeLessThan(1e-6)
  })

  it('keeps the simplified equations at λDU·T1 = 0.1 and switches just above', () => {
    expect(SIMPLIFIED_LAMBDA_T_MAX).toBe(0.1)
    const at = subsystemPfdDetail(sub({ lambdaDu: 0.1 / 8760 }))
    expect(at.method).toBe('simplified')
    expect(at.warning).toBeNull()
    expectDigits(at.pfd, '5.0000e-2') // λT/2 = 0.05
    const above = subsystemPfdDetail(sub({ lambdaDu: 0.1001 / 8760 }))
    expect(above.method).toBe('exact')
    expect(above.pfd).toBeLessThan(0.1001 / 2) // the exact average lies below λT/2
  })

  it('a bypass can no longer lower the figure of a function far beyond its assumptions', () => {
    const valve = sub({ role: 'final_element', lambdaDu: 2e-5, architecture: '2oo2', testIntervalMonths: 120 })
    const none = effectivePfd({ subsystems: [valve], bypassedHours: 0, periodHours: 8760 })
    const bypassed = effectivePfd({ subsystems: [valve], bypassedHours: 876, periodHours: 8760 })
    expect(none.pfd).toBeLessThanOrEqual(1)
    expect(bypassed.pfd).toBeGreaterThanOrEqual(none.pfd)
    expect(sifPfd([valve, valve])).toBeLessThanOrEqual(1)
  })
})

describe('IEC 61508-6 Annex B tables (Ed. 2, T1 and MTTR = MRT = 8 h as the tables assume)', () => {
  // The tables' λ column is the TOTAL failure rate of a channel, with half of it dangerous (λD = λ/2) and the
  // diagnostic coverage DC splitting λD into λDD = DC·λD and λDU = (1 − DC)·λD (IEC 61508-6 Annex B assumptions;
  // from memory). Values printed to two significant digits; these rows are from memory of Table B.2 (T1 = ½ y),
  // Table B.3 (T1 = 1 y) and Table B.5 (T1 = 10 y) for λ = 0.5E-06 h⁻¹.
  it.each<[Architecture, number, number, string]>([
    ['1oo1', 12, 0, '1.1e-3'],
    ['1oo1', 12, 0.6, '4.4e-4'],
    ['1oo1', 12, 0.9, '1.1e-4'],
    ['1oo1', 12, 0.99, '1.3e-5'],
    ['2oo2', 12, 0, '2.2e-3'],
    ['1oo1', 6, 0, '5.5e-4'],
    ['1oo1', 120, 0, '1.1e-2'],
  ])('%s, T1 %s months, DC %s, λ 0.5E-06 → %s', (architecture, testIntervalMonths, dc, published) => {
    const lambdaD = 0.5e-6 / 2
    const value = subsystemPfd(
      sub({
        architecture,
        testIntervalMonths,
        lambdaDu: lambdaD * (1 - dc),
        lambdaDd: lambdaD * dc,
        mttrHours: 8,
      }),
    )
    expectDigits(value, published)
  })
})

describe('1oo2D, λSD, MRT apart from MTTR', () => {
  // The 1oo2D equation as printed in IEC 61508-6 Ed. 2 B.3.2.2.4 (from memory), written out here independently and
  // evaluated by mathjs:
  //   t'CE = [λDU·(T1/2 + MRT) + (λDD + λSD)·MTTR] / (λDU + λDD + λSD),  t'GE = T1/3 + MRT
  //   PFD = 2(1−β)λDU·[(1−β)λDU + (1−βD)λDD + λSD]·t'CE·t'GE + βD·λDD·MTTR + β·λDU·(T1/2 + MRT)
  const printed1oo2D =
    '2 * (1 - b) * u * ((1 - b) * u + (1 - bd) * d + s) * ((u * (T / 2 + mrt) + (d + s) * mttr) / (u + d + s)) * ' +
    '(T / 3 + mrt) + bd * d * mttr + b * u * (T / 2 + mrt)'
  it.each([
    [2e-7, 1.8e-6, 3e-6, 0.05, 0.025, 12, 8, 24],
    [1e-6, 4e-6, 1e-6, 0.1, 0.05, 24, 4, 8],
    [5e-7, 0, 2e-6, 0.02, 0.01, 6, 0, 72],
  ])('λDU %s, λDD %s, λSD %s, β %s, βD %s, %s months, MRT %s h, MTTR %s h', (u, d, s, b, bd, months, mrt, mttr) => {
    const expected = evaluate(printed1oo2D, { u, d, s, b, bd, T: months * 730, mrt, mttr }) as number
    const actual = subsystemPfd(
      sub({
        architecture: '1oo2D',
        lambdaDu: u,
        lambdaDd: d,
        lambdaSd: s,
        beta: b,
        betaD: bd,
        testIntervalMonths: months,
        mrtHours: mrt,
        mttrHours: mttr,
      }),
    )
    expect(Math.abs(actual / expected - 1)).toBeLessThan(1e-12)
  })

  it('reduces to the 1oo2 check value 9.5888e−4 without detected or safe failures (λDU 2e−6, β 0.1, 1 y)', () => {
    expectDigits(subsystemPfd(sub({ architecture: '1oo2D', beta: 0.1 })), '9.5888e-4')
  })

  it('a higher λSD raises the 1oo2D figure (a channel that detects a safe failure drops out)', () => {
    const base = sub({ architecture: '1oo2D', beta: 0.1, lambdaDd: 2e-6, mttrHours: 8 })
    expect(subsystemPfd({ ...base, lambdaSd: 1e-5 })).toBeGreaterThan(subsystemPfd(base))
  })

  it('MRT and MTTR set apart: 1oo1, λDU 1e−6, λDD 4e−6, TI 8 760 h', () => {
    // reference: λDU·(TI/2 + MRT) + λDD·MTTR with MRT = MTTR = 8 h → 4.420e−3; with no MRT (repair instant
    // after the test) λDU·TI/2 + λDD·MTTR → 4.412e−3
    expectDigits(subsystemPfd(sub({ lambdaDu: 1e-6, lambdaDd: 4e-6, mttrHours: 8, mrtHours: 8 })), '4.420e-3')
    expectDigits(subsystemPfd(sub({ lambdaDu: 1e-6, lambdaDd: 4e-6, mttrHours: 8, mrtHours: 0 })), '4.412e-3')
  })

  it('rejects a negative λSD or MRT', () => {
    expect(() => subsystemPfd(sub({ lambdaSd: -1e-6 }))).toThrow(RangeError)
    expect(() => subsystemPfd(sub({ mrtHours: -1 }))).toThrow(RangeError)
  })
})
