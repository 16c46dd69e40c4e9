import { OutOfRangeError, withinRange } from './errors.ts'

/**
 * IEC 60751 platinum resistance thermometers (α = 0.00385), Callendar–Van Dusen equation.
 * Constants from IEC 60751 (Callendar–Van Dusen).
 */

/** Callendar–Van Dusen A in °C⁻¹ (IEC 60751). */
export const CVD_A = 3.9083e-3
/** Callendar–Van Dusen B in °C⁻² (IEC 60751). */
export const CVD_B = -5.775e-7
/** Callendar–Van Dusen C in °C⁻⁴, used below 0 °C only (IEC 60751). */
export const CVD_C = -4.183e-12

/** Lowest temperature of the IEC 60751 relationship, °C. */
export const RTD_T_MIN = -200
/** Highest temperature of the IEC 60751 relationship, °C. */
export const RTD_T_MAX = 850

/** Platinum elements supported. */
export type RtdElement = 'Pt100' | 'Pt1000'

/** Nominal resistance R0 at 0 °C, in ohm, of each element. */
export const R0_BY_ELEMENT: Record<RtdElement, number> = { Pt100: 100, Pt1000: 1000 }

const IEC_60751_RANGE = 'the IEC 60751 relationship is defined from −200 to 850 °C'
/** Half the last printed step of the IEC 60751 Pt100 table (0.01 Ω), ohm; scaled by R0/100 for other elements. */
export const TABLE_OHM_HALF_STEP_PT100 = 0.005

function ratio(t: number): number {
  return t < 0 ? 1 + CVD_A * t + CVD_B * t * t + CVD_C * (t - 100) * t * t * t : 1 + CVD_A * t + CVD_B * t * t
}

function ratioDerivative(t: number): number {
  return t < 0 ? CVD_A + 2 * CVD_B * t + CVD_C * (4 * t * t * t - 300 * t * t) : CVD_A + 2 * CVD_B * t
}

function checkR0(r0: number): void {
  if (!(Number.isFinite(r0) && r0 > 0)) throw new RangeError(`R0 must be a positive number of ohm, got ${r0}`)
}

/**
 * Resistance in ohm of a platinum RTD with nominal resistance r0 (100 or 1000 Ω) at t °C;
 * −200 … 850 °C, else OutOfRangeError.
 */
export function rtdResistance(tC: number, r0: number): number {
  checkR0(r0)
  const t = withinRange('temperature', tC, RTD_T_MIN, RTD_T_MAX, '°C', () => IEC_60751_RANGE)
  return r0 * ratio(t)
}

/**
 * Temperature in °C of a platinum RTD with nominal resistance r0 at resistance r ohm: closed form for r ≥ r0,
 * Newton iteration on the full equation (C term) started from the quadratic solution for r < r0.
 * Throws OutOfRangeError outside R(−200 °C) … R(850 °C).
 */
export function rtdTemperature(rOhm: number, r0: number): number {
  checkR0(r0)
  const rMin = r0 * ratio(RTD_T_MIN)
  const rMax = r0 * ratio(RTD_T_MAX)
  // The IEC 60751 table prints Pt100 resistances to 0.01 Ω (18.52 Ω at −200 °C, where the equation gives
  // 18.5201 Ω): accept within half that step, scaled with R0, and clamp to the range end.
  const halfStep = (TABLE_OHM_HALF_STEP_PT100 * r0) / 100
  if (Number.isFinite(rOhm) && rOhm < rMin && rOhm >= rMin - halfStep) return RTD_T_MIN
  if (Number.isFinite(rOhm) && rOhm > rMax && rOhm <= rMax + halfStep) return RTD_T_MAX
  if (!Number.isFinite(rOhm) || rOhm < rMin || rOhm > rMax) {
    throw new OutOfRangeError('resistance', rOhm, rMin, rMax, 'ohm', IEC_60751_RANGE)
  }
  const w = rOhm / r0
  const quadratic = (-CVD_A + Math.sqrt(CVD_A * CVD_A - 4 * CVD_B * (1 - w))) / (2 * CVD_B)
  if (w >= 1) return quadratic
  let t = quadratic
  for (let i = 0; i < 50; i++) {
    const step = (ratio(t) - w) / ratioDerivative(t)
    t -= step
    if (Math.abs(step) < 1e-12) break
  }
  return t
}
