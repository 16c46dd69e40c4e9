import { ErrorCode } from '../errors.ts'

function show(x: number): string {
  if (Number.isFinite(x)) return String(Number(x.toPrecision(7)))
  return Number.isNaN(x) ? 'NaN' : x > 0 ? '∞' : '−∞'
}

/**
 * The value with as many digits as it takes to differ from the bounds it is shown beside: 1372.0001 °C reads
 * "1372.0001", never "1372", next to a top of 1372 °C.
 */
function showApart(x: number, bounds: number[]): string {
  if (!Number.isFinite(x)) return show(x)
  for (let digits = 7; digits <= 17; digits++) {
    const text = String(Number(x.toPrecision(digits)))
    if (!bounds.some((b) => b !== x && Number.isFinite(b) && text === String(Number(b.toPrecision(digits)))))
      return text
  }
  return String(x)
}

/** A value lies outside the range where a reference function (or a signal) is defined; never extrapolated. */
export class OutOfRangeError extends Error {
  /** API error code the server answers with (422). */
  readonly code = ErrorCode.UNPROCESSABLE
  /** What was out of range, e.g. 'temperature', 'emf', 'resistance', 'flow'. */
  readonly quantity: string
  /** The value that was refused. */
  readonly value: number
  /** Lowest accepted value (inclusive), in `unit`. */
  readonly min: number
  /** Highest accepted value (inclusive), in `unit`. */
  readonly max: number
  /** Unit of value, min and max. */
  readonly unit: string

  /** Builds the error; `explanation` is appended to the standard message. */
  constructor(quantity: string, value: number, min: number, max: number, unit: string, explanation?: string) {
    super(
      `${quantity} ${showApart(value, [min, max])} ${unit} ` +
        `is outside the valid range ${show(min)} … ${show(max)} ${unit}` +
        (explanation ? `: ${explanation}` : ''),
    )
    this.name = 'OutOfRangeError'
    this.quantity = quantity
    this.value = value
    this.min = min
    this.max = max
    this.unit = unit
  }
}

// Tolerance on range edges for values that came through a unit conversion (e.g. 2501.6 °F → 1372.0000000001 °C).
const EDGE_EPS = 1e-9

/**
 * `value` held to `min … max` for a reference function: a value past an edge by no more than a unit conversion's
 * rounding is that edge; a value further out, or not finite, throws OutOfRangeError (never extrapolated) with the
 * explanation `explain` gives (built only then: the check runs on every conversion).
 */
export function withinRange(
  quantity: string,
  value: number,
  min: number,
  max: number,
  unit: string,
  explain: () => string,
): number {
  if (!Number.isFinite(value) || value < min - EDGE_EPS || value > max + EDGE_EPS)
    throw new OutOfRangeError(quantity, value, min, max, unit, explain())
  return Math.min(max, Math.max(min, value))
}

/** An input needed for a computation was not given (e.g. the cold-junction temperature for an mV source). */
export class MissingInputError extends Error {
  /** API error code the server answers with (400). */
  readonly code = ErrorCode.VALIDATION_FAILED
  /** Name of the missing input, e.g. 'coldJunctionC'. */
  readonly field: string

  /** Builds the error for the named input. */
  constructor(field: string, message?: string) {
    super(message ?? `${field} is required`)
    this.name = 'MissingInputError'
    this.field = field
  }
}

/** A unit is unknown, or two units cannot be converted into each other (different quantity, gauge vs absolute). */
export class UnitConversionError extends Error {
  /** API error code the server answers with (422). */
  readonly code = ErrorCode.UNPROCESSABLE
  /** Source unit as given. */
  readonly from: string
  /** Target unit as given (empty when only one unit was checked). */
  readonly to: string

  /** Builds the error with a plain-English reason. */
  constructor(from: string, to: string, message: string) {
    super(message)
    this.name = 'UnitConversionError'
    this.from = from
    this.to = to
  }
}
