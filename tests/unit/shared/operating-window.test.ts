import { describe, expect, it } from 'vitest'
import {
  checkOperatingWindow,
  type OperatingWindowInput,
  type WindowFindingCode,
  type WindowInstrumentInput,
  type WindowLimitInput,
  type WindowSiblingInput,
} from '../../../shared/domain/operating-window.ts'

// Fixture: a pressure instrument 0–100 bar, normal range 20–60, design limits 0–90, transmitter burnout upscale.
// The limit under test is a high trip at 80 bar with a 2 bar deadband; the instrument also carries a high alarm at 70.
// Default tolerance (site policy, docs/conventions.md) is ±0.5 % of span = ±0.5 bar.
const instrument: WindowInstrumentInput = {
  rangeLow: 0,
  rangeHigh: 100,
  normalLow: 20,
  normalHigh: 60,
  designLow: 0,
  designHigh: 90,
  burnout: 'upscale',
}

const highTrip: WindowLimitInput = {
  id: 'L-1',
  direction: 'high',
  limitClass: 'trip',
  setpoint: 80,
  deadband: 2,
  deadbandUnit: 'eu',
  onDelaySec: 0,
  offDelaySec: 0,
  analyticalLimit: 85,
  processSafetyTimeSec: 10,
  requiredResponseTimeSec: 4,
  badValueTrip: false,
}

const highAlarm: WindowSiblingInput = {
  id: 'L-2',
  tag: 'PAH-101',
  direction: 'high',
  limitClass: 'alarm',
  setpoint: 70,
  status: 'active',
}

function run(
  limit: Partial<WindowLimitInput> = {},
  inst: Partial<WindowInstrumentInput> = {},
  siblings: WindowSiblingInput[] = [highAlarm],
  defaultTolerancePercentSpan?: number,
) {
  const input: OperatingWindowInput = {
    limit: { ...highTrip, ...limit },
    instrument: { ...instrument, ...inst },
    siblings,
    ...(defaultTolerancePercentSpan === undefined ? {} : { defaultTolerancePercentSpan }),
  }
  return checkOperatingWindow(input)
}

const errorCodes = (r: ReturnType<typeof run>): WindowFindingCode[] => r.errors.map((f) => f.code)
const warningCodes = (r: ReturnType<typeof run>): WindowFindingCode[] => r.warnings.map((f) => f.code)

// A low trip at 10 bar (below normal low 20) for mirrored cases.
const lowTrip: Partial<WindowLimitInput> = { direction: 'low', setpoint: 10, analyticalLimit: 5 }

describe('checkOperatingWindow', () => {
  it('finds nothing in a consistent window', () => {
    expect(run()).toEqual({ errors: [], warnings: [] })
    expect(run(lowTrip, { burnout: 'downscale' }, [])).toEqual({ errors: [], warnings: [] })
  })

  it('gives each finding an UPPER_SNAKE code and a message', () => {
    const r = run({ setpoint: 120, onDelaySec: 3 }, { burnout: 'downscale' })
    for (const f of [...r.errors, ...r.warnings]) {
      expect(f.code).toMatch(/^[A-Z]+(_[A-Z]+)*$/)
      expect(f.message.length).toBeGreaterThan(10)
    }
  })

  // Empty instrument range: a data error (common practice)
  it.each<[number, number, boolean]>([
    [0, 100, false],
    [100, 100, true],
    [100, 0, true],
  ])('range %s to %s → RANGE_INVALID %s', (rangeLow, rangeHigh, flagged) => {
    expect(errorCodes(run({}, { rangeLow, rangeHigh })).includes('RANGE_INVALID')).toBe(flagged)
  })

  // Window nesting, sensor range outermost (docs/domain/operating-window.md, operating-window term after API RP 584):
  // range ends included
  it.each<[number, boolean]>([
    [100, false],
    [100.1, true],
    [0, false],
    [-0.1, true],
  ])('setpoint %s → SETPOINT_OUTSIDE_RANGE %s', (setpoint, flagged) => {
    const r = run({ setpoint, analyticalLimit: null }, { normalHigh: null, designHigh: null })
    expect(errorCodes(r).includes('SETPOINT_OUTSIDE_RANGE')).toBe(flagged)
  })

  // Common practice (no source): setpoint ± default tolerance keeps ≥ 5 % of span from both range ends.
  // 0–100, tol 0.5, margin 5: upper edge 94.5 + 0.5 = 95 passes; lower edge 5.5 − 0.5 = 5 passes.
  it.each<[string, Partial<WindowLimitInput>, Partial<WindowInstrumentInput>, number | undefined, boolean]>([
    ['high side at the edge', { setpoint: 94.5 }, {}, undefined, false],
    ['high side just inside the margin', { setpoint: 94.6 }, {}, undefined, true],
    ['low side at the edge', { ...lowTrip, setpoint: 5.5, analyticalLimit: null }, {}, undefined, false],
    ['low side just inside the margin', { ...lowTrip, setpoint: 5.4, analyticalLimit: null }, {}, undefined, true],
    ['site tolerance 1 %, at the edge', { setpoint: 94 }, {}, 1, false],
    ['site tolerance 1 %, inside the margin', { setpoint: 94.1 }, {}, 1, true],
    // exact decimals: range 0–3.3, 3.3 − 5 % × 3.3 − 0.5 % × 3.3 = 3.1185 (hand arithmetic); binary floats would
    // put 3.1185 + 0.0165 above 3.135 and warn at the edge
    [
      'small span, at the edge',
      { setpoint: 3.1185, deadband: 0, analyticalLimit: null },
      { rangeHigh: 3.3, normalLow: null, normalHigh: 1, designLow: null },
      undefined,
      false,
    ],
    [
      'small span, inside the margin',
      { setpoint: 3.1186, deadband: 0, analyticalLimit: null },
      { rangeHigh: 3.3, normalLow: null, normalHigh: 1, designLow: null },
      undefined,
      true,
    ],
  ])('%s → SETPOINT_NEAR_RANGE_END %s', (_name, limit, inst, tol, flagged) => {
    const r = run(limit, { ...inst, designHigh: null }, [], tol)
    expect(warningCodes(r).includes('SETPOINT_NEAR_RANGE_END')).toBe(flagged)
  })

  it('does not add SETPOINT_NEAR_RANGE_END to a setpoint already outside the range', () => {
    expect(warningCodes(run({ setpoint: 101 })).includes('SETPOINT_NEAR_RANGE_END')).toBe(false)
  })

  // Window nesting (docs/domain/operating-window.md): alarm and trip beyond the normal range, strictly (PV ≥ SP
  // activates, docs/conventions.md "Activation and return",
  // so a high setpoint equal to normal high would act inside normal operation)
  it.each<[string, Partial<WindowLimitInput>, Partial<WindowInstrumentInput>, boolean]>([
    ['high at normal high', { setpoint: 60, deadband: 0 }, {}, true],
    ['high just above normal high', { setpoint: 60.1, deadband: 0 }, {}, false],
    ['low at normal low', { ...lowTrip, setpoint: 20, deadband: 0 }, {}, true],
    ['low just below normal low', { ...lowTrip, setpoint: 19.9, deadband: 0 }, {}, false],
    ['high with no normal high entered', { setpoint: 50, deadband: 0 }, { normalHigh: null }, false],
  ])('%s → SETPOINT_NOT_BEYOND_NORMAL %s', (_name, limit, inst, flagged) => {
    expect(errorCodes(run(limit, inst, [])).includes('SETPOINT_NOT_BEYOND_NORMAL')).toBe(flagged)
  })

  // Window nesting (docs/domain/operating-window.md): trip ⊃ alarm, i.e. a high trip strictly above every high alarm,
  // mirrored for low
  it.each<[string, Partial<WindowLimitInput>, WindowSiblingInput[], WindowFindingCode | null]>([
    ['high trip above the alarm', {}, [{ ...highAlarm, setpoint: 79.9 }], null],
    ['high trip equal to the alarm', {}, [{ ...highAlarm, setpoint: 80 }], 'TRIP_NOT_BEYOND_ALARM'],
    ['high trip below the alarm', {}, [{ ...highAlarm, setpoint: 85 }], 'TRIP_NOT_BEYOND_ALARM'],
    [
      'high alarm below the trip',
      { limitClass: 'alarm', setpoint: 70, analyticalLimit: null },
      [{ ...highAlarm, limitClass: 'trip', setpoint: 70.1 }],
      null,
    ],
    [
      'high alarm equal to the trip',
      { limitClass: 'alarm', setpoint: 70, analyticalLimit: null },
      [{ ...highAlarm, limitClass: 'trip', setpoint: 70 }],
      'ALARM_NOT_BEFORE_TRIP',
    ],
    ['low trip below the alarm', lowTrip, [{ ...highAlarm, direction: 'low', setpoint: 10.1 }], null],
    [
      'low trip equal to the alarm',
      lowTrip,
      [{ ...highAlarm, direction: 'low', setpoint: 10 }],
      'TRIP_NOT_BEYOND_ALARM',
    ],
    [
      'low alarm above the trip',
      { ...lowTrip, limitClass: 'alarm', analyticalLimit: null },
      [{ ...highAlarm, direction: 'low', limitClass: 'trip', setpoint: 9.9 }],
      null,
    ],
    [
      'low alarm below the trip',
      { ...lowTrip, limitClass: 'alarm', analyticalLimit: null },
      [{ ...highAlarm, direction: 'low', limitClass: 'trip', setpoint: 12 }],
      'ALARM_NOT_BEFORE_TRIP',
    ],
    ['offending alarm is retired', {}, [{ ...highAlarm, setpoint: 85, status: 'retired' }], null],
    ['offending alarm is proposed', {}, [{ ...highAlarm, setpoint: 85, status: 'proposed' }], 'TRIP_NOT_BEYOND_ALARM'],
    ['alarm on the other side', {}, [{ ...highAlarm, direction: 'low', setpoint: 85 }], null],
  ])('%s → %s', (_name, limit, siblings, code) => {
    const codes = errorCodes(run(limit, {}, siblings)).filter(
      (c) => c === 'TRIP_NOT_BEYOND_ALARM' || c === 'ALARM_NOT_BEFORE_TRIP',
    )
    expect(codes).toEqual(code === null ? [] : [code])
  })

  it('names the offending sibling by tag', () => {
    const r = run({}, {}, [{ ...highAlarm, setpoint: 85 }])
    expect(r.errors.find((f) => f.code === 'TRIP_NOT_BEYOND_ALARM')?.message).toContain('PAH-101')
  })

  // Deadband convention docs/conventions.md "Activation and return" / ISA-18.2: a high limit returns when
  // PV < SP − DB. The return threshold must lie at or above normal high (mirrored for low); % span converts via the
  // span.
  it.each<[string, Partial<WindowLimitInput>, Partial<WindowInstrumentInput>, boolean]>([
    ['high, return point at normal high', { deadband: 20 }, {}, false],
    ['high, return point inside normal', { deadband: 20.1 }, {}, true],
    [
      'high, % span at the edge (10 % of 200 = 20)',
      { deadband: 10, deadbandUnit: 'percent_span' },
      { rangeHigh: 200, designHigh: null },
      false,
    ],
    [
      'high, % span into normal (10.05 % of 200 = 20.1)',
      { deadband: 10.05, deadbandUnit: 'percent_span' },
      { rangeHigh: 200, designHigh: null },
      true,
    ],
    ['low, return point at normal low', { ...lowTrip, deadband: 10 }, {}, false],
    ['low, return point inside normal', { ...lowTrip, deadband: 10.1 }, {}, true],
    ['high, no normal high entered', { deadband: 50 }, { normalHigh: null }, false],
  ])('%s → DEADBAND_INTO_NORMAL %s', (_name, limit, inst, flagged) => {
    const r = run(limit, inst, [])
    expect(errorCodes(r).includes('DEADBAND_INTO_NORMAL')).toBe(flagged)
    if (flagged) expect(r.errors.find((f) => f.code === 'DEADBAND_INTO_NORMAL')?.field).toBe('deadband')
  })

  // Window nesting (docs/domain/operating-window.md): sensor range ⊃ design limit; range ends included
  it.each<[Partial<WindowInstrumentInput>, number]>([
    [{ designHigh: 100 }, 0],
    [{ designHigh: 100.1 }, 1],
    [{ designLow: 0 }, 0],
    [{ designLow: -0.1 }, 1],
    [{ designLow: -5, designHigh: 105 }, 2],
    [{ designLow: null, designHigh: null }, 0],
  ])('%o → %s DESIGN_LIMIT_OUTSIDE_RANGE', (inst, count) => {
    expect(
      warningCodes(run({ analyticalLimit: null }, inst)).filter((c) => c === 'DESIGN_LIMIT_OUTSIDE_RANGE'),
    ).toHaveLength(count)
  })

  // Window nesting (docs/domain/operating-window.md): design limit ⊃ trip; a high limit acting at (PV ≥) the design
  // value is flagged
  it.each<[string, Partial<WindowLimitInput>, Partial<WindowInstrumentInput>, boolean]>([
    ['high trip below design high', {}, { designHigh: 80.1 }, false],
    ['high trip at design high', {}, { designHigh: 80 }, true],
    ['low trip above design low', lowTrip, { designLow: 9.9 }, false],
    ['low trip at design low', lowTrip, { designLow: 10 }, true],
  ])('%s → SETPOINT_BEYOND_DESIGN_LIMIT %s', (_name, limit, inst, flagged) => {
    expect(warningCodes(run(limit, inst, [])).includes('SETPOINT_BEYOND_DESIGN_LIMIT')).toBe(flagged)
  })

  // Analytical limit: the value the trip must act before (IEC 61511 / ISA-TR84 term, docs/domain/operating-window.md);
  // with the default
  // tolerance ±0.5 % of span = 0.5 bar: high trip 80 needs AL ≥ 80.5, low trip 10 needs AL ≤ 9.5.
  it.each<[string, Partial<WindowLimitInput>, number | undefined, boolean]>([
    ['high, AL at setpoint + tolerance', { analyticalLimit: 80.5 }, undefined, false],
    ['high, AL inside the tolerance band', { analyticalLimit: 80.4 }, undefined, true],
    ['high, AL below the setpoint', { analyticalLimit: 79 }, undefined, true],
    ['high, site tolerance 1 % makes 80.5 too close', { analyticalLimit: 80.5 }, 1, true],
    ['low, AL at setpoint − tolerance', { ...lowTrip, analyticalLimit: 9.5 }, undefined, false],
    ['low, AL inside the tolerance band', { ...lowTrip, analyticalLimit: 9.6 }, undefined, true],
    ['alarm, not checked', { limitClass: 'alarm', setpoint: 75, analyticalLimit: 75 }, undefined, false],
    ['trip without an analytical limit', { analyticalLimit: null }, undefined, false],
  ])('%s → TRIP_TOLERANCE_BEYOND_ANALYTICAL %s', (_name, limit, tol, flagged) => {
    expect(errorCodes(run(limit, {}, [], tol)).includes('TRIP_TOLERANCE_BEYOND_ANALYTICAL')).toBe(flagged)
  })

  // Process safety time (IEC 61511 / ISA-TR84 term, docs/domain/operating-window.md): on-delay + required response time
  // ≤ PST, end included
  it.each<[Partial<WindowLimitInput>, boolean]>([
    [{ onDelaySec: 0, requiredResponseTimeSec: 10 }, false],
    [{ onDelaySec: 0, requiredResponseTimeSec: 10.1 }, true],
    [{ onDelaySec: 2, requiredResponseTimeSec: 8 }, false],
    [{ onDelaySec: 2.5, requiredResponseTimeSec: 8 }, true],
    [{ processSafetyTimeSec: null, requiredResponseTimeSec: 100 }, false],
    [{ requiredResponseTimeSec: null }, false],
  ])('%o → RESPONSE_EXCEEDS_SAFETY_TIME %s', (limit, flagged) => {
    const r = run(limit)
    expect(errorCodes(r).includes('RESPONSE_EXCEEDS_SAFETY_TIME')).toBe(flagged)
  })

  // Fail-safe on sensor failure (EN 14597 / NFPA 86 limiter requirement, from memory):
  // burnout away from the trip with no bad-value trip leaves the function blind to a sensor failure.
  it.each<[string, Partial<WindowLimitInput>, WindowInstrumentInput['burnout'], boolean]>([
    ['high trip, downscale', {}, 'downscale', true],
    ['high trip, downscale, bad-value trip recorded', { badValueTrip: true }, 'downscale', false],
    ['high trip, upscale', {}, 'upscale', false],
    ['low trip, upscale', lowTrip, 'upscale', true],
    ['low trip, upscale, bad-value trip recorded', { ...lowTrip, badValueTrip: true }, 'upscale', false],
    ['low trip, downscale', lowTrip, 'downscale', false],
    ['high alarm, downscale', { limitClass: 'alarm', setpoint: 75, analyticalLimit: null }, 'downscale', false],
    ['high trip, no burnout', {}, 'none', false],
  ])('%s → BURNOUT_AWAY_FROM_TRIP %s', (_name, limit, burnout, flagged) => {
    expect(warningCodes(run(limit, { burnout }, [])).includes('BURNOUT_AWAY_FROM_TRIP')).toBe(flagged)
  })

  // Common practice (alarm delays per ISA-18.2 are an alarm feature;
  // a delay on a trip spends process safety time)
  it.each<[Partial<WindowLimitInput>, boolean]>([
    [{ onDelaySec: 0 }, false],
    [{ onDelaySec: 0.5 }, true],
    [{ onDelaySec: 1, offDelaySec: 0 }, true],
    [{ limitClass: 'alarm', setpoint: 75, analyticalLimit: null, onDelaySec: 15 }, false],
  ])('%o → DELAY_ON_TRIP %s', (limit, flagged) => {
    expect(warningCodes(run(limit, {}, [])).includes('DELAY_ON_TRIP')).toBe(flagged)
  })

  // Common practice: two limits of the same class and direction at one value duplicate each other (exact comparison)
  const twin: WindowSiblingInput = {
    id: 'L-3',
    tag: 'PSHH-101B',
    direction: 'high',
    limitClass: 'trip',
    setpoint: 80,
    status: 'active',
  }
  it.each<[string, WindowLimitInput['id'], WindowSiblingInput, boolean]>([
    ['same class, direction and value', 'L-1', twin, true],
    ['value differs in the 7th decimal', 'L-1', { ...twin, setpoint: 80.0000001 }, false],
    ['sibling is retired', 'L-1', { ...twin, status: 'retired' }, false],
    ['sibling is proposed', 'L-1', { ...twin, status: 'proposed' }, true],
    ['the row itself', 'L-3', twin, false],
    ['the row itself, numeric id', 3, { ...twin, id: 3 }, false],
    ['new limit without id', null, twin, true],
    ['other direction', 'L-1', { ...twin, direction: 'low' }, false],
  ])('%s (row id %s)', (_name, id, sibling, flagged) => {
    const r = run({ id }, {}, [sibling])
    expect(errorCodes(r).includes('DUPLICATE_SETPOINT')).toBe(flagged)
    if (flagged) expect(r.errors.find((f) => f.code === 'DUPLICATE_SETPOINT')?.message).toContain('PSHH-101B')
  })

  // Exact comparison (docs/conventions.md "Exact numbers": numbers stored as numeric and compared exactly). In binary
  // floats
  // 80.1 − 20 = 60.099999999999994 < 60.1 would raise a false DEADBAND_INTO_NORMAL.
  it.each<[string, Partial<WindowLimitInput>, Partial<WindowInstrumentInput>, WindowFindingCode[]]>([
    ['deadband return point exactly at normal high', { setpoint: 80.1, deadband: 20 }, { normalHigh: 60.1 }, []],
    [
      'deadband return point 0.01 inside normal',
      { setpoint: 80.1, deadband: 20.01 },
      { normalHigh: 60.1 },
      ['DEADBAND_INTO_NORMAL'],
    ],
    // range −0.1 to 0.2 (span 0.3): deadband 0.1 % span = 0.0003, tolerance 0.0015
    [
      '% span deadband at the edge',
      { setpoint: 0.1003, deadband: 0.1, deadbandUnit: 'percent_span', analyticalLimit: 0.1018 },
      { rangeLow: -0.1, rangeHigh: 0.2, normalLow: null, normalHigh: 0.1, designLow: null, designHigh: null },
      [],
    ],
    [
      '% span deadband, AL 0.0001 too close',
      { setpoint: 0.1003, deadband: 0.1, deadbandUnit: 'percent_span', analyticalLimit: 0.1017 },
      { rangeLow: -0.1, rangeHigh: 0.2, normalLow: null, normalHigh: 0.1, designLow: null, designHigh: null },
      ['TRIP_TOLERANCE_BEYOND_ANALYTICAL'],
    ],
  ])('%s', (_name, limit, inst, codes) => {
    expect(errorCodes(run(limit, inst, []))).toEqual(codes)
  })

  it('rejects a negative site tolerance', () => {
    expect(() => run({}, {}, [], -1)).toThrow(RangeError)
  })
})
