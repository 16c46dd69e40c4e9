import { OutOfRangeError } from './errors.ts'

/**
 * Analog process signals: 4–20 mA live-zero current (linear or square-root), voltage signals, shunt voltage and
 * the NAMUR NE 43 signal bands. Formulas: linear and square-root scaling; bands: NAMUR NE 43.
 */

/** Live zero of the current signal, mA. */
export const MA_LOW = 4
/** Top of the current signal, mA. */
export const MA_HIGH = 20
/** Span of the current signal, mA. */
export const MA_SPAN = MA_HIGH - MA_LOW
/** Conventional shunt that turns 4–20 mA into 1–5 V, ohm (ISA-50.00.01, from memory in analog-signals.md). */
export const SHUNT_OHMS = 250

/**
 * The range bottom must lie below the range top. A reverse-acting transmitter (20 mA at the bottom) is entered with
 * its range in rising order, as the register keeps it; the signal math refuses LRV > URV so that both agree
 * (docs/domain/test-signals.md, "4–20 mA, square root, voltage").
 */
function checkRange(low: number, high: number): void {
  if (!(Number.isFinite(low) && Number.isFinite(high)) || low === high) {
    throw new RangeError(`The range ${low} … ${high} has no span`)
  }
  if (low > high) {
    throw new RangeError(
      `The range bottom ${low} lies above the range top ${high}: enter the range in rising order (bottom below top)`,
    )
  }
}

/** Refuses NaN and ±∞ with the name of the input, instead of passing NaN on to the answer. */
function finite(value: number, name: string): void {
  if (!Number.isFinite(value)) throw new RangeError(`${name} must be a finite number, got ${value}`)
}

/** Fraction of span (0 at low, 1 at high) of an engineering value; the range must rise (low < high). */
export function fractionOfSpan(value: number, low: number, high: number): number {
  checkRange(low, high)
  finite(value, 'The value')
  return (value - low) / (high - low)
}

/**
 * Current in mA for an engineering value over the range low … high, linear:
 * I = 4 + 16·(PV − LRV)/(URV − LRV).
 */
export function currentFromValue(value: number, low: number, high: number): number {
  return MA_LOW + MA_SPAN * fractionOfSpan(value, low, high)
}

/**
 * Engineering value for a current in mA over the range low … high, linear:
 * PV = LRV + (I − 4)/16·(URV − LRV).
 */
export function valueFromCurrent(mA: number, low: number, high: number): number {
  checkRange(low, high)
  finite(mA, 'The current')
  return low + ((mA - MA_LOW) / MA_SPAN) * (high - low)
}

/**
 * Current in mA of a differential-pressure transmitter with linear-in-ΔP output for a flow over low … high
 * (normally 0 … Qmax): I = 4 + 16·((Q − low)/(high − low))². A flow below `low` has no signal: OutOfRangeError.
 */
export function sqrtCurrentFromFlow(flow: number, low: number, high: number): number {
  const x = fractionOfSpan(flow, low, high)
  if (!Number.isFinite(x) || x < 0) {
    throw new OutOfRangeError(
      'flow',
      flow,
      Math.min(low, high),
      Number.POSITIVE_INFINITY,
      'eu',
      'a square-root (ΔP) signal cannot represent a flow below the bottom of the range',
    )
  }
  return MA_LOW + MA_SPAN * x * x
}

/** Options of the square-root extraction. */
export interface SqrtOptions {
  /**
   * Flow forced to the range bottom below this percentage of flow span (site practice; no standard value).
   * Default: none.
   */
  lowFlowCutoffPercent?: number
}

/**
 * Highest low-flow cut-off accepted, % of flow span. Typical cut-offs are 0.5–10 % of flow (common practice, no
 * standard value); above 20 % the cut-off would hide a real flow, and 100 % or more would read every flow as zero.
 */
export const LOW_FLOW_CUTOFF_MAX_PERCENT = 20

/**
 * Flow for a current in mA from a linear-in-ΔP transmitter: Q = low + (high − low)·√((I − 4)/16);
 * I ≤ 4 mA gives `low`.
 * An optional low-flow cut-off forces the result to `low` below that percentage of flow span.
 */
export function flowFromSqrtCurrent(mA: number, low: number, high: number, options: SqrtOptions = {}): number {
  checkRange(low, high)
  finite(mA, 'The current')
  const cutoff = options.lowFlowCutoffPercent ?? 0
  if (!(Number.isFinite(cutoff) && cutoff >= 0 && cutoff <= LOW_FLOW_CUTOFF_MAX_PERCENT)) {
    throw new RangeError(
      `The low-flow cut-off must be between 0 and ${LOW_FLOW_CUTOFF_MAX_PERCENT} % of flow span, got ${cutoff}`,
    )
  }
  const x = mA <= MA_LOW ? 0 : Math.sqrt((mA - MA_LOW) / MA_SPAN)
  if (x * 100 < cutoff) return low
  return low + x * (high - low)
}

/** Voltage signal ranges: 0–10 V, 1–5 V, 0–5 V (and 1–10 V, which the data model also allows). */
export interface VoltageRange {
  low: 0 | 1
  high: 5 | 10
}

/** Voltage for an engineering value over low … high on a voltage signal, linear. */
export function voltageFromValue(value: number, low: number, high: number, signal: VoltageRange): number {
  return signal.low + (signal.high - signal.low) * fractionOfSpan(value, low, high)
}

/** Engineering value for a voltage on a voltage signal over low … high, linear. */
export function valueFromVoltage(volts: number, low: number, high: number, signal: VoltageRange): number {
  checkRange(low, high)
  finite(volts, 'The voltage')
  return low + ((volts - signal.low) / (signal.high - signal.low)) * (high - low)
}

/** Voltage in V across a shunt (default 250 Ω) carrying mA: U = I·R. */
export function shuntVoltage(mA: number, ohms: number = SHUNT_OHMS): number {
  return (mA / 1000) * ohms
}

/** Current in mA through a shunt (default 250 Ω) showing volts: I = U/R. */
export function currentFromShuntVoltage(volts: number, ohms: number = SHUNT_OHMS): number {
  return (volts / ohms) * 1000
}

/**
 * NAMUR NE 43 class of a loop current: failure_low (≤ 3.6 mA), uncertain_low (3.6 … 3.8, not used for measurement),
 * under_range (3.8 … < 4.0), measuring (4.0 … 20.0), over_range (> 20.0 … 20.5),
 * uncertain_high (20.5 … 21.0, not used),
 * failure_high (≥ 21.0).
 */
export type Ne43Class =
  'failure_low' | 'uncertain_low' | 'under_range' | 'measuring' | 'over_range' | 'uncertain_high' | 'failure_high'

/** Thresholds of the NE 43 classification, mA; configurable per loop for devices that signal failure elsewhere. */
export interface Ne43Thresholds {
  failureLow: number
  measureLow: number
  measureHigh: number
  failureHigh: number
}

/** NE 43 thresholds (3.6 / 3.8 / 20.5 / 21.0 mA) [NE 43 via analog-signals.md]. */
export const NE43_THRESHOLDS: Ne43Thresholds = { failureLow: 3.6, measureLow: 3.8, measureHigh: 20.5, failureHigh: 21 }

// Computed currents carry binary rounding noise (e.g. 3.8000000000000003); compare with this margin.
const MA_EPS = 1e-9

/**
 * Checks per-loop thresholds: finite and in the order of the NE 43 bands, failureLow < measureLow ≤ 4 mA and
 * 20 mA ≤ measureHigh < failureHigh. Inverted thresholds would classify a failed loop as measuring.
 */
export function checkNe43Thresholds(t: Ne43Thresholds): void {
  const values = [t.failureLow, t.measureLow, t.measureHigh, t.failureHigh]
  if (!values.every((v) => Number.isFinite(v))) throw new RangeError('NE 43 thresholds must be finite numbers of mA')
  if (!(
    t.failureLow < t.measureLow &&
    t.measureLow <= MA_LOW &&
    MA_HIGH <= t.measureHigh &&
    t.measureHigh < t.failureHigh
  )) {
    throw new RangeError(
      `NE 43 thresholds must rise: failure low < measure low ≤ 4 mA and 20 mA ≤ measure high < failure high, got ` +
        `${t.failureLow} / ${t.measureLow} / ${t.measureHigh} / ${t.failureHigh} mA`,
    )
  }
}

/**
 * Classifies a current in mA by the NE 43 bands
 * (boundaries inclusive as in NE 43: 3.6 is failure, 3.8 and 20.5 measure).
 */
export function classifyCurrent(mA: number, thresholds: Ne43Thresholds = NE43_THRESHOLDS): Ne43Class {
  if (Number.isNaN(mA)) throw new RangeError('Current is not a number')
  if (thresholds !== NE43_THRESHOLDS) checkNe43Thresholds(thresholds)
  if (mA <= thresholds.failureLow + MA_EPS) return 'failure_low'
  if (mA >= thresholds.failureHigh - MA_EPS) return 'failure_high'
  if (mA < thresholds.measureLow - MA_EPS) return 'uncertain_low'
  if (mA > thresholds.measureHigh + MA_EPS) return 'uncertain_high'
  if (mA < MA_LOW - MA_EPS) return 'under_range'
  if (mA > MA_HIGH + MA_EPS) return 'over_range'
  return 'measuring'
}

/** True when a current carries measurement information under NE 43 (3.8 … 20.5 mA). */
export function isMeasurementCurrent(mA: number, thresholds: Ne43Thresholds = NE43_THRESHOLDS): boolean {
  const c = classifyCurrent(mA, thresholds)
  return c === 'under_range' || c === 'measuring' || c === 'over_range'
}
