// Consistency checks of one limit against its instrument's operating window
// (sensor range ⊃ design limit ⊃ trip ⊃ alarm ⊃ normal range, docs/domain/operating-window.md)
// and its sibling limits.
// Rules, edges and sources: docs/domain/operating-window.md.
//
// Numbers are stored as PostgreSQL `numeric` and compared exactly (docs/conventions.md): every value is turned into a
// scaled integer from its shortest decimal representation, so 80.1 + 0.4 equals 80.5 here, as it does in the database.

/** High limits act on a rising value, low limits on a falling one. */
export type LimitDirection = 'high' | 'low'
/** An alarm asks an operator to act; a trip acts by itself. */
export type LimitClass = 'alarm' | 'alert' | 'trip'
/** Deadband in engineering units or in percent of the instrument span. */
export type DeadbandUnit = 'eu' | 'percent_span'
/** Where the transmitter drives its output on sensor failure. */
export type Burnout = 'upscale' | 'downscale' | 'none'
/** Lifecycle state of a limit. */
export type LimitStatus = 'proposed' | 'active' | 'retired'
/** Identifier of a limit as the API carries it. */
export type LimitId = string | number

/** The limit being checked; null marks an optional value that was not entered. */
export interface WindowLimitInput {
  id: LimitId | null
  direction: LimitDirection
  limitClass: LimitClass
  setpoint: number
  deadband: number
  deadbandUnit: DeadbandUnit
  onDelaySec: number
  offDelaySec: number
  analyticalLimit: number | null
  processSafetyTimeSec: number | null
  requiredResponseTimeSec: number | null
  /** A trip on sensor failure / bad value is recorded for this function. */
  badValueTrip: boolean
}

/** The limit's primary instrument. */
export interface WindowInstrumentInput {
  rangeLow: number
  rangeHigh: number
  normalLow: number | null
  normalHigh: number | null
  designLow: number | null
  designHigh: number | null
  burnout: Burnout
}

/** Another limit on the same instrument. */
export interface WindowSiblingInput {
  id: LimitId
  tag?: string
  direction: LimitDirection
  limitClass: LimitClass
  setpoint: number
  status: LimitStatus
}

/** Everything the operating-window check needs. */
export interface OperatingWindowInput {
  limit: WindowLimitInput
  instrument: WindowInstrumentInput
  siblings: WindowSiblingInput[]
  /** Site policy: default trip-test tolerance, ± percent of span (docs/conventions.md#site-policies default 0.5). */
  defaultTolerancePercentSpan?: number
}

/** Codes of the operating-window findings. */
export type WindowFindingCode =
  | 'RANGE_INVALID'
  | 'SETPOINT_OUTSIDE_RANGE'
  | 'SETPOINT_NEAR_RANGE_END'
  | 'SETPOINT_NOT_BEYOND_NORMAL'
  | 'TRIP_NOT_BEYOND_ALARM'
  | 'ALARM_NOT_BEFORE_TRIP'
  | 'DEADBAND_INTO_NORMAL'
  | 'DESIGN_LIMIT_OUTSIDE_RANGE'
  | 'SETPOINT_BEYOND_DESIGN_LIMIT'
  | 'TRIP_TOLERANCE_BEYOND_ANALYTICAL'
  | 'RESPONSE_EXCEEDS_SAFETY_TIME'
  | 'BURNOUT_AWAY_FROM_TRIP'
  | 'DELAY_ON_TRIP'
  | 'DUPLICATE_SETPOINT'

/** One finding; `field` is the API field name of the Limit it concerns, when there is one. */
export interface WindowFinding {
  code: WindowFindingCode
  field?: string
  message: string
}

/** Errors block saving; warnings are shown and may be accepted. */
export interface OperatingWindowResult {
  errors: WindowFinding[]
  warnings: WindowFinding[]
}

/** Site-policy default trip-test tolerance, ± % of span (docs/conventions.md#site-policies). */
export const DEFAULT_TOLERANCE_PERCENT_SPAN = 0.5

/** Clearance kept between setpoint ± tolerance and each range end, % of span (common practice, no source). */
export const RANGE_END_MARGIN_PERCENT_SPAN = 5

// ---- exact decimals: value = units × 10^−scale ----

interface Dec {
  units: bigint
  scale: number
}

function dec(value: number): Dec {
  if (!Number.isFinite(value)) throw new RangeError(`not a finite number: ${String(value)}`)
  const m = /^(-?)(\d+)(?:\.(\d+))?(?:e([+-]?\d+))?$/i.exec(String(value))
  if (!m) throw new RangeError(`cannot read number ${String(value)}`)
  const [, sign, int, frac = '', exp = '0'] = m
  let units = BigInt(`${sign}${int}${frac}`)
  let scale = frac.length - Number(exp)
  if (scale < 0) {
    units *= 10n ** BigInt(-scale)
    scale = 0
  }
  return { units, scale }
}

function aligned(a: Dec, b: Dec): [bigint, bigint, number] {
  const scale = Math.max(a.scale, b.scale)
  return [a.units * 10n ** BigInt(scale - a.scale), b.units * 10n ** BigInt(scale - b.scale), scale]
}

function add(a: Dec, b: Dec): Dec {
  const [x, y, scale] = aligned(a, b)
  return { units: x + y, scale }
}

function sub(a: Dec, b: Dec): Dec {
  const [x, y, scale] = aligned(a, b)
  return { units: x - y, scale }
}

/** a × p / 100, exact. */
function percentOf(a: Dec, p: Dec): Dec {
  return { units: a.units * p.units, scale: a.scale + p.scale + 2 }
}

function cmp(a: Dec, b: Dec): number {
  const [x, y] = aligned(a, b)
  return x < y ? -1 : x > y ? 1 : 0
}

function fmt(d: Dec): string {
  const negative = d.units < 0n
  const digits = (negative ? -d.units : d.units).toString().padStart(d.scale + 1, '0')
  const int = digits.slice(0, digits.length - d.scale)
  const frac = digits.slice(digits.length - d.scale).replace(/0+$/, '')
  return `${negative ? '-' : ''}${int}${frac ? `.${frac}` : ''}`
}

const lt = (a: Dec, b: Dec): boolean => cmp(a, b) < 0
const le = (a: Dec, b: Dec): boolean => cmp(a, b) <= 0
const gt = (a: Dec, b: Dec): boolean => cmp(a, b) > 0
const ge = (a: Dec, b: Dec): boolean => cmp(a, b) >= 0

function siblingName(s: WindowSiblingInput): string {
  return s.tag ?? `limit ${String(s.id)}`
}

/** Checks one limit against its instrument's operating window and its sibling limits (pure). */
export function checkOperatingWindow(input: OperatingWindowInput): OperatingWindowResult {
  const { limit, instrument } = input
  const errors: WindowFinding[] = []
  const warnings: WindowFinding[] = []
  const high = limit.direction === 'high'
  const trip = limit.limitClass === 'trip'
  const sp = dec(limit.setpoint)
  const lo = dec(instrument.rangeLow)
  const hi = dec(instrument.rangeHigh)
  const span = sub(hi, lo)
  const tolPercent = input.defaultTolerancePercentSpan ?? DEFAULT_TOLERANCE_PERCENT_SPAN
  if (!(tolPercent >= 0)) throw new RangeError('defaultTolerancePercentSpan must be ≥ 0')
  const rangeOk = gt(span, dec(0))
  const tol = percentOf(span, dec(tolPercent))

  if (!rangeOk) {
    errors.push({
      code: 'RANGE_INVALID',
      message: `instrument range ${fmt(lo)} to ${fmt(hi)} is empty: range high must be above range low`,
    })
  }

  // 1. setpoint inside the measuring range, ends included
  const inRange = ge(sp, lo) && le(sp, hi)
  if (rangeOk && !inRange) {
    errors.push({
      code: 'SETPOINT_OUTSIDE_RANGE',
      field: 'setpoint',
      message: `setpoint ${fmt(sp)} is outside the measuring range ${fmt(lo)} to ${fmt(hi)}`,
    })
  }

  // 2. setpoint ± tolerance keeps at least 5 % of span from both range ends (common practice)
  if (rangeOk && inRange) {
    const margin = percentOf(span, dec(RANGE_END_MARGIN_PERCENT_SPAN))
    const upper = add(sp, tol)
    const lower = sub(sp, tol)
    if (gt(upper, sub(hi, margin))) {
      warnings.push({
        code: 'SETPOINT_NEAR_RANGE_END',
        field: 'setpoint',
        message:
          `setpoint + tolerance (${fmt(upper)}) comes within ${RANGE_END_MARGIN_PERCENT_SPAN} % of span ` +
          `of range high ${fmt(hi)} (keep below ${fmt(sub(hi, margin))})`,
      })
    }
    if (lt(lower, add(lo, margin))) {
      warnings.push({
        code: 'SETPOINT_NEAR_RANGE_END',
        field: 'setpoint',
        message:
          `setpoint − tolerance (${fmt(lower)}) comes within ${RANGE_END_MARGIN_PERCENT_SPAN} % of span ` +
          `of range low ${fmt(lo)} (keep above ${fmt(add(lo, margin))})`,
      })
    }
  }

  // 3a. beyond the normal range on the correct side, strictly
  const normalEdge = high ? instrument.normalHigh : instrument.normalLow
  if (normalEdge !== null) {
    const edge = dec(normalEdge)
    if (high ? !gt(sp, edge) : !lt(sp, edge)) {
      errors.push({
        code: 'SETPOINT_NOT_BEYOND_NORMAL',
        field: 'setpoint',
        message: high
          ? `high ${limit.limitClass} setpoint ${fmt(sp)} must be above normal high ${fmt(edge)}`
          : `low ${limit.limitClass} setpoint ${fmt(sp)} must be below normal low ${fmt(edge)}`,
      })
    }
  }

  const siblings = input.siblings.filter(
    (s) => s.status !== 'retired' && !(limit.id !== null && String(s.id) === String(limit.id)),
  )

  // 3b. a trip lies beyond every alarm (and alert) of the same direction, strictly; an alarm before every trip
  for (const s of siblings) {
    if (s.direction !== limit.direction || trip === (s.limitClass === 'trip')) continue
    const other = dec(s.setpoint)
    const tripValue = trip ? sp : other
    const alarmValue = trip ? other : sp
    const ordered = high ? gt(tripValue, alarmValue) : lt(tripValue, alarmValue)
    if (ordered) continue
    const side = high ? 'above' : 'below'
    errors.push(
      trip
        ? {
            code: 'TRIP_NOT_BEYOND_ALARM',
            field: 'setpoint',
            message:
              `${limit.direction} trip setpoint ${fmt(sp)} must be ${side} ${limit.direction} ${s.limitClass} ` +
              `${siblingName(s)} at ${fmt(other)}`,
          }
        : {
            code: 'ALARM_NOT_BEFORE_TRIP',
            field: 'setpoint',
            message:
              `${limit.direction} ${limit.limitClass} setpoint ${fmt(sp)} must be ${high ? 'below' : 'above'} ` +
              `${limit.direction} trip ${siblingName(s)} at ${fmt(other)}`,
          },
    )
  }

  // 4. the return threshold (high: setpoint − deadband; low: setpoint + deadband) stays out of the normal range
  if (normalEdge !== null && (limit.deadbandUnit === 'eu' || rangeOk)) {
    const edge = dec(normalEdge)
    const db = limit.deadbandUnit === 'eu' ? dec(limit.deadband) : percentOf(span, dec(limit.deadband))
    const returnPoint = high ? sub(sp, db) : add(sp, db)
    if (high ? lt(returnPoint, edge) : gt(returnPoint, edge)) {
      errors.push({
        code: 'DEADBAND_INTO_NORMAL',
        field: 'deadband',
        message: high
          ? `return point setpoint − deadband = ${fmt(returnPoint)} lies below normal high ${fmt(edge)}: ` +
            'the deadband reaches into the normal range'
          : `return point setpoint + deadband = ${fmt(returnPoint)} lies above normal low ${fmt(edge)}: ` +
            'the deadband reaches into the normal range',
      })
    }
  }

  // 5. design limits inside the measuring range, ends included
  if (rangeOk) {
    for (const [name, value] of [
      ['design low', instrument.designLow],
      ['design high', instrument.designHigh],
    ] as const) {
      if (value === null) continue
      const d = dec(value)
      if (lt(d, lo) || gt(d, hi)) {
        warnings.push({
          code: 'DESIGN_LIMIT_OUTSIDE_RANGE',
          message:
            `instrument ${name} ${fmt(d)} is outside the measuring range ${fmt(lo)} to ${fmt(hi)}: ` +
            'the sensor cannot see the design limit',
        })
      }
    }
  }

  // 5b. the limit acts before the design limit of its side (window nesting, docs/domain/operating-window.md)
  const designEdge = high ? instrument.designHigh : instrument.designLow
  if (designEdge !== null) {
    const d = dec(designEdge)
    if (high ? ge(sp, d) : le(sp, d)) {
      warnings.push({
        code: 'SETPOINT_BEYOND_DESIGN_LIMIT',
        field: 'setpoint',
        message: high
          ? `high ${limit.limitClass} setpoint ${fmt(sp)} is not below design high ${fmt(d)}`
          : `low ${limit.limitClass} setpoint ${fmt(sp)} is not above design low ${fmt(d)}`,
      })
    }
  }

  // 6. trip setpoint plus tolerance acts before the analytical limit (ends included)
  if (trip && limit.analyticalLimit !== null && rangeOk) {
    const al = dec(limit.analyticalLimit)
    const worst = high ? add(sp, tol) : sub(sp, tol)
    if (high ? gt(worst, al) : lt(worst, al)) {
      errors.push({
        code: 'TRIP_TOLERANCE_BEYOND_ANALYTICAL',
        field: 'setpoint',
        message: high
          ? `setpoint + tolerance = ${fmt(worst)} exceeds the analytical limit ${fmt(al)}`
          : `setpoint − tolerance = ${fmt(worst)} falls below the analytical limit ${fmt(al)}`,
      })
    }
  }

  // 7. on-delay + required response time within the process safety time (ends included)
  if (limit.processSafetyTimeSec !== null && limit.requiredResponseTimeSec !== null) {
    const total = add(dec(limit.onDelaySec), dec(limit.requiredResponseTimeSec))
    const pst = dec(limit.processSafetyTimeSec)
    if (gt(total, pst)) {
      errors.push({
        code: 'RESPONSE_EXCEEDS_SAFETY_TIME',
        field: 'requiredResponseTimeSec',
        message: `on-delay + required response time = ${fmt(total)} s exceeds the process safety time ${fmt(pst)} s`,
      })
    }
  }

  // 8. sensor failure drives the signal away from the trip, and no bad-value trip is recorded
  if (
    trip &&
    !limit.badValueTrip &&
    ((high && instrument.burnout === 'downscale') || (!high && instrument.burnout === 'upscale'))
  ) {
    warnings.push({
      code: 'BURNOUT_AWAY_FROM_TRIP',
      field: 'badValueTrip',
      message:
        `the sensor burns out ${instrument.burnout}, away from this ${limit.direction} trip, ` +
        'and no bad-value trip is recorded: a sensor failure would go unnoticed',
    })
  }

  // 9. delays are for alarms
  if (trip && gt(dec(limit.onDelaySec), dec(0))) {
    warnings.push({
      code: 'DELAY_ON_TRIP',
      field: 'onDelaySec',
      message:
        `on-delay of ${fmt(dec(limit.onDelaySec))} s on a trip: ` +
        'delays are meant for alarms and use up process safety time',
    })
  }

  // 10. no two limits of the same class and direction at the same value
  for (const s of siblings) {
    if (s.direction !== limit.direction || s.limitClass !== limit.limitClass) continue
    if (cmp(dec(s.setpoint), sp) === 0) {
      errors.push({
        code: 'DUPLICATE_SETPOINT',
        field: 'setpoint',
        message:
          `${siblingName(s)} is already a ${limit.direction} ${limit.limitClass} ` + `at ${fmt(sp)} on this instrument`,
      })
    }
  }

  return { errors, warnings }
}

/**
 * The return (reset) point of a limit in exact decimals: a high limit returns below setpoint − deadband, a low one
 * above setpoint + deadband; a deadband in % of span is taken of rangeHigh − rangeLow. Answered as a decimal string
 * so 80.1 − 0.4 reads 79.7, as PostgreSQL's numeric would.
 */
export function returnPoint(
  limit: { direction: 'high' | 'low'; setpoint: number; deadband: number; deadbandUnit: DeadbandUnit },
  range: { rangeLow: number; rangeHigh: number },
): string {
  const sp = dec(limit.setpoint)
  const span = sub(dec(range.rangeHigh), dec(range.rangeLow))
  const db = limit.deadbandUnit === 'eu' ? dec(limit.deadband) : percentOf(span, dec(limit.deadband))
  return fmt(limit.direction === 'high' ? sub(sp, db) : add(sp, db))
}
