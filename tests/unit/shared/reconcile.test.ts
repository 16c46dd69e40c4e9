import { describe, expect, it } from 'vitest'
import { attributeOf, type Observation, reconcile, type RegisterLimit } from '../../../shared/domain/reconcile.ts'

const limit = (over: Partial<RegisterLimit> = {}): RegisterLimit => ({
  limitId: 1,
  tag: 'TSHH-101',
  status: 'active',
  areaId: 1,
  unit: '°C',
  setpoint: '780',
  deadband: '5',
  deadbandUnit: 'eu',
  rangeLow: '0',
  rangeHigh: '1200',
  onDelaySec: '2',
  offDelaySec: '0',
  priority: null,
  latching: true,
  bypassActive: false,
  ...over,
})
const obs = (attribute: Observation['attribute'], value: string, over: Partial<Observation> = {}): Observation => ({
  tag: 'TSHH-101',
  attribute,
  value,
  unit: null,
  ...over,
})
const run = (limits: RegisterLimit[], observations: Observation[], expected: number[] = []) =>
  reconcile({ limits, observations, expectedLimitIds: new Set(expected) })

describe('reconcile: exact decimals', () => {
  it('equal spellings of one decimal match (780 = 780.0 = 0780.00)', () => {
    for (const v of ['780', '780.0', '0780.00', '+780'])
      expect(run([limit()], [obs('setpoint', v)]).differences, v).toEqual([])
  })
  it('780.01 against 780 is a change without MOC (no tolerance on decimals)', () => {
    const r = run([limit()], [obs('setpoint', '780.01')])
    expect(r.differences).toHaveLength(1)
    expect(r.differences[0]).toMatchObject({
      kind: 'changed_without_moc',
      attribute: 'setpoint',
      registerValue: '780',
      deviceValue: '780.01',
      unit: '°C',
    })
    expect(r.limits).toEqual([{ limitId: 1, matched: false, differences: ['setpoint: changed_without_moc'] }])
  })
  it('tags match whatever their case and surrounding spaces', () => {
    expect(run([limit()], [obs('setpoint', '780', { tag: ' tshh-101 ' })]).limits[0].matched).toBe(true)
  })
})

describe('reconcile: units converted with the register unit rules', () => {
  // 1472 °F = (1472 − 32) / 1.8 = 800 °C: the definition of the Fahrenheit scale (°F = °C × 1.8 + 32, NIST SP 811 §B.8)
  it('1472 °F is 800 °C: differs from 780 °C', () => {
    const r = run([limit()], [obs('setpoint', '1472', { unit: '°F' })])
    expect(r.differences[0]).toMatchObject({ kind: 'changed_without_moc', registerValue: '780', deviceValue: '800' })
  })
  // 780 °C × 1.8 + 32 = 1436 °F
  it('1436 °F is 780 °C: matches', () => {
    expect(run([limit()], [obs('setpoint', '1436', { unit: 'degF' })]).differences).toEqual([])
  })
  // 1 bar = 100 kPa exactly (SI definition of the bar, NIST SP 811 Table 8)
  it('a pressure setpoint of 10 bar against 1000 kPa matches; 1001 kPa does not', () => {
    const p = limit({ unit: 'bar', setpoint: '10', deadband: '0.2' })
    expect(run([p], [obs('setpoint', '1000', { unit: 'kPa' })]).differences).toEqual([])
    expect(run([p], [obs('setpoint', '1001', { unit: 'kPa' })]).differences).toHaveLength(1)
  })
  // 1 psi = 6894.757 Pa (NIST SP 811 Appendix B.8, 6.894757 E+03): 145.038 psi = 10.000 bar to 4 decimals
  it('145.038 psi against 10 bar: within a tolerance of 0.001 bar, outside without it', () => {
    const p = limit({ unit: 'bar', setpoint: '10' })
    expect(run([p], [obs('setpoint', '145.038', { unit: 'psi' })]).differences).toHaveLength(1)
    expect(
      reconcile({
        limits: [p],
        observations: [obs('setpoint', '145.038', { unit: 'psi' })],
        expectedLimitIds: new Set(),
        tolerances: { setpoint: '0.001' },
      }).differences,
    ).toEqual([])
  })
  // a deadband is a difference: 9 °F = 5 K = 5 °C, without the 32 °F offset
  it('a deadband of 9 °F is 5 °C', () => {
    expect(run([limit()], [obs('deadband', '9', { unit: '°F' })]).differences).toEqual([])
  })
  it('a deadband in % of span is compared in engineering units (0.5 % of 0–1200 °C = 6 °C)', () => {
    const l = limit({ deadband: '0.5', deadbandUnit: 'percent_span' })
    expect(run([l], [obs('deadband', '6')]).differences).toEqual([])
    expect(run([l], [obs('deadband', '5')]).differences).toHaveLength(1)
  })
  it('delays in ms and min are seconds (2000 ms = 2 s)', () => {
    expect(run([limit()], [obs('onDelaySec', '2000', { unit: 'ms' })]).differences).toEqual([])
    expect(run([limit()], [obs('onDelaySec', '0.5', { unit: 'min' })]).differences).toHaveLength(1)
  })
  it('a unit of another quantity is a problem of the row, not a finding', () => {
    const r = run([limit()], [obs('setpoint', '780', { unit: 'bar' })])
    expect(r.differences).toEqual([])
    expect(r.problems[0].message).toMatch(/different quantities/)
  })
})

describe('reconcile: floats from a device', () => {
  it('a float32 equal within one float32 step matches; the next representable step below 780 does not', () => {
    // one step of binary32 between 512 and 1024 is 2^(9−23) = 2^-14; 780 − 2^-13 is two steps below 780
    const l = limit({ setpoint: '780.1' })
    expect(run([l], [obs('setpoint', String(Math.fround(780.1)), { float: true })]).differences).toEqual([])
    expect(run([limit()], [obs('setpoint', String(780 - 2 ** -13), { float: true })]).differences).toHaveLength(1)
  })
})

describe('reconcile: kinds of finding', () => {
  it('not in the register: an unknown tag, and a tag the register holds only as retired', () => {
    const r = run(
      [limit({ limitId: 2, tag: 'TAH-9', status: 'retired' })],
      [obs('setpoint', '1', { tag: 'XYZ-1' }), obs('setpoint', '1', { tag: 'TAH-9' })],
    )
    expect(r.differences.map((d) => [d.kind, d.tag, d.limitId])).toEqual([
      ['not_in_register', 'XYZ-1', null],
      ['not_in_register', 'TAH-9', 2],
    ])
  })
  it('missing on the device: an expected active limit the source does not hold; unexpected ones are not missing', () => {
    const other = limit({ limitId: 2, tag: 'PSHH-7' })
    const r = run([limit(), other], [obs('setpoint', '780')], [1, 2])
    expect(r.differences.map((d) => [d.kind, d.tag])).toEqual([['missing_on_device', 'PSHH-7']])
    expect(run([limit(), other], [obs('setpoint', '780')], [1]).differences).toEqual([])
  })
  it('bypassed without authorization: flag set and no active bypass on record; with one on record no finding', () => {
    expect(run([limit()], [obs('bypassed', '1')]).differences[0].kind).toBe('bypassed_without_authorization')
    expect(run([limit({ bypassActive: true })], [obs('bypassed', '1')]).differences).toEqual([])
    expect(run([limit()], [obs('bypassed', '0')]).differences).toEqual([])
  })
  it('disabled: enabled = no without a record; "suppressed = yes" reads as disabled', () => {
    expect(run([limit()], [obs('enabled', 'no')]).differences[0].kind).toBe('disabled')
    expect(run([limit({ bypassActive: true })], [obs('enabled', 'no')]).differences).toEqual([])
    expect(attributeOf('Suppressed')).toEqual({ attribute: 'enabled', invert: true })
    expect(attributeOf('ON_DELAY')).toEqual({ attribute: 'onDelaySec' })
    expect(attributeOf('colour')).toBeNull()
  })
  it('latching and priority differences are changes without MOC', () => {
    expect(run([limit()], [obs('latching', 'no')]).differences[0]).toMatchObject({
      kind: 'changed_without_moc',
      registerValue: 'yes',
      deviceValue: 'no',
    })
    const alarm = limit({ priority: 'high' })
    expect(run([alarm], [obs('priority', 'HIGH')]).differences).toEqual([])
    expect(run([alarm], [obs('priority', 'medium')]).differences[0].kind).toBe('changed_without_moc')
  })
  it('an approved change request that puts the device value explains the difference', () => {
    const r = reconcile({
      limits: [limit()],
      observations: [obs('setpoint', '790.0')],
      expectedLimitIds: new Set(),
      pending: [{ limitId: 1, attribute: 'setpoint', to: '790', changeRequestId: 12 }],
    })
    expect(r.differences).toEqual([])
    expect(r.explained).toEqual([{ limitId: 1, attribute: 'setpoint', changeRequestId: 12 }])
  })
})
