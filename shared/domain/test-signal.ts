import {
  classifyCurrent,
  currentFromShuntVoltage,
  currentFromValue,
  flowFromSqrtCurrent,
  isMeasurementCurrent,
  shuntVoltage,
  SHUNT_OHMS,
  sqrtCurrentFromFlow,
  valueFromCurrent,
  valueFromVoltage,
  voltageFromValue,
} from './analog-signal.ts'
import { MissingInputError, OutOfRangeError, UnitConversionError } from './errors.ts'
import { R0_BY_ELEMENT, rtdResistance, rtdTemperature, type RtdElement } from './rtd.ts'
import { temperatureFromMeasured, thermocoupleEmf, type TcType } from './thermocouple.ts'
import { convertValue, variableOfUnit } from './units.ts'

/**
 * The test signal of a limit (DOMAIN §3): what to inject, in which unit, to reach the setpoint, with the values at
 * setpoint ± tolerance and at the expected reset point. Computation is unrounded; outputs are rounded at the end
 * (mV and mA and V to 0.001, ohm to 0.01, engineering values to 1e-6 to drop binary noise).
 */

/** The signal of an instrument (DOMAIN §3 Instrument.signal). */
export type TestSignalSpec =
  | { kind: 'thermocouple'; tcType: TcType; headTransmitter: boolean }
  | { kind: 'rtd'; element: RtdElement; wires: 2 | 3 | 4; headTransmitter: boolean }
  | { kind: 'current'; sqrtExtraction: boolean }
  | { kind: 'voltage'; low: 0 | 1; high: 5 | 10 }
  | { kind: 'switch' }

/** The instrument fields the test signal needs. */
export interface TestSignalInstrument {
  unit: string
  rangeLow: number
  rangeHigh: number
  signal: TestSignalSpec
}

/** The limit fields the test signal needs; tolerance is the trip-test tolerance (omit it to skip the ± points). */
export interface TestSignalLimit {
  direction: 'high' | 'low'
  setpoint: number
  deadband: number
  deadbandUnit: 'eu' | 'percent_span'
  tolerance?: number | null
  toleranceUnit?: 'eu' | 'percent_span'
}

/** How the thermocouple signal is produced, and the cold-junction (instrument terminal) temperature in °C. */
export interface TestSignalOptions {
  mode?: 'mv_source' | 'tc_simulate'
  coldJunctionC?: number | null
}

/** Unit of the injected signal; 'eu' means the instrument's engineering unit. */
export type SignalUnit = 'mA' | 'mV' | 'ohm' | 'V' | 'eu'

/** One further value shown beside the main test signal. */
export interface TestSignalAlternative {
  label: string
  unit: string
  value: number
}

/** The test-signal answer (DOMAIN §3). */
export interface TestSignal {
  unit: SignalUnit
  value: number
  engineering: { value: number; unit: string }
  alternatives: TestSignalAlternative[]
  components: Record<string, number>
  flags: string[]
  notes: string[]
}

function roundTo(x: number, decimals: number): number {
  const f = 10 ** decimals
  const r = (Math.sign(x) * Math.round(Math.abs(x) * f)) / f
  return r === 0 ? 0 : r
}

const DECIMALS: Record<SignalUnit, number> = { mV: 3, mA: 3, V: 3, ohm: 2, eu: 6 }

function roundSignal(value: number, unit: SignalUnit | string): number {
  return roundTo(value, Object.hasOwn(DECIMALS, unit) ? DECIMALS[unit as SignalUnit] : DECIMALS.eu)
}

function span(instrument: TestSignalInstrument): number {
  const s = Math.abs(instrument.rangeHigh - instrument.rangeLow)
  if (!(Number.isFinite(s) && s > 0)) {
    throw new RangeError(`The instrument range ${instrument.rangeLow} … ${instrument.rangeHigh} has no span`)
  }
  return s
}

function toEu(
  value: number,
  unit: 'eu' | 'percent_span' | undefined,
  instrument: TestSignalInstrument,
  field: string,
): number {
  if (!(Number.isFinite(value) && value >= 0)) throw new RangeError(`${field} must be a number ≥ 0, got ${value}`)
  return unit === 'percent_span' ? (value / 100) * span(instrument) : value
}

function celsiusOf(value: number, instrument: TestSignalInstrument): number {
  let variable: string
  try {
    variable = variableOfUnit(instrument.unit)
  } catch {
    variable = ''
  }
  if (variable !== 'temperature') {
    throw new UnitConversionError(
      instrument.unit,
      '°C',
      `A ${instrument.signal.kind} instrument needs a temperature unit (°C, °F or K), not '${instrument.unit}'`,
    )
  }
  return convertValue(value, instrument.unit, '°C')
}

function coldJunction(options: TestSignalOptions): number {
  const cj = options.coldJunctionC
  if (cj === undefined || cj === null || !Number.isFinite(cj)) {
    throw new MissingInputError(
      'coldJunctionC',
      'The cold-junction temperature (the instrument terminal temperature, °C) is required for a millivolt source',
    )
  }
  return cj
}

interface SignalPoint {
  unit: SignalUnit
  value: number
}

/** The injected signal (unrounded) for one engineering value; throws OutOfRangeError outside the reference function. */
function signalAt(instrument: TestSignalInstrument, eu: number, options: TestSignalOptions): SignalPoint {
  const signal = instrument.signal
  switch (signal.kind) {
    case 'thermocouple': {
      const t = celsiusOf(eu, instrument)
      if ((options.mode ?? 'mv_source') === 'tc_simulate') {
        thermocoupleEmf(signal.tcType, t) // range check only: the calibrator computes the emf itself
        return { unit: 'eu', value: eu }
      }
      const cj = coldJunction(options)
      return { unit: 'mV', value: thermocoupleEmf(signal.tcType, t) - thermocoupleEmf(signal.tcType, cj) }
    }
    case 'rtd':
      return { unit: 'ohm', value: rtdResistance(celsiusOf(eu, instrument), R0_BY_ELEMENT[signal.element]) }
    case 'current':
      return {
        unit: 'mA',
        value: signal.sqrtExtraction
          ? sqrtCurrentFromFlow(eu, instrument.rangeLow, instrument.rangeHigh)
          : currentFromValue(eu, instrument.rangeLow, instrument.rangeHigh),
      }
    case 'voltage':
      return { unit: 'V', value: voltageFromValue(eu, instrument.rangeLow, instrument.rangeHigh, signal) }
    case 'switch':
      return { unit: 'eu', value: eu }
  }
}

function ne43Flags(mA: number, flags: string[]): void {
  if (!isMeasurementCurrent(mA)) {
    const flag = `ne43_${classifyCurrent(mA)}`
    if (!flags.includes(flag)) flags.push(flag)
  }
}

function fmt(value: number, unit: string): string {
  return `${roundSignal(value, unit)} ${unit}`
}

/**
 * Computes the test signal for a limit on an instrument. Throws MissingInputError (thermocouple mV source without
 * `coldJunctionC`), OutOfRangeError (setpoint outside the reference function or signal), UnitConversionError
 * (thermocouple/RTD instrument without a temperature unit).
 */
export function computeTestSignal(
  instrument: TestSignalInstrument,
  limit: TestSignalLimit,
  options: TestSignalOptions = {},
): TestSignal {
  const signal = instrument.signal
  const sp = limit.setpoint
  if (!Number.isFinite(sp)) throw new RangeError(`setpoint must be a number, got ${sp}`)
  const eu = instrument.unit
  const flags: string[] = []
  const notes: string[] = []
  const components: Record<string, number> = {}
  const alternatives: TestSignalAlternative[] = []

  const main = signalAt(instrument, sp, options)
  const low = Math.min(instrument.rangeLow, instrument.rangeHigh)
  const high = Math.max(instrument.rangeLow, instrument.rangeHigh)
  span(instrument)
  if (sp < low || sp > high) {
    flags.push('setpoint_outside_range')
    notes.push(
      `The setpoint ${sp} ${eu} lies outside the instrument range ` +
        `${instrument.rangeLow} … ${instrument.rangeHigh} ${eu}.`,
    )
  }

  switch (signal.kind) {
    case 'thermocouple': {
      const t = celsiusOf(sp, instrument)
      const emf = thermocoupleEmf(signal.tcType, t)
      components.setpointC = roundTo(t, 3)
      components.emfSetpointMv = roundTo(emf, 4)
      if (main.unit === 'mV') {
        const cj = coldJunction(options)
        components.coldJunctionC = cj
        components.emfColdJunctionMv = roundTo(thermocoupleEmf(signal.tcType, cj), 4)
        alternatives.push({
          label: 'Emf with the reference junction at 0 °C (table value)',
          unit: 'mV',
          value: roundSignal(emf, 'mV'),
        })
        notes.push(
          `Inject ${fmt(main.value, 'mV')} with a millivolt source at the instrument terminals, ` +
            'connected with copper leads: ' +
            `E(setpoint) − E(cold junction) for type ${signal.tcType} (ITS-90), cold junction ${cj} °C. ` +
            'Measure the terminal temperature when you test; ' +
            'the value changes by about the Seebeck coefficient per °C.',
        )
      } else {
        alternatives.push({
          label: 'Emf with the reference junction at 0 °C (table value)',
          unit: 'mV',
          value: roundSignal(emf, 'mV'),
        })
        const cj = options.coldJunctionC
        if (cj !== undefined && cj !== null && Number.isFinite(cj)) {
          alternatives.push({
            label: `Millivolt source value with the cold junction at ${cj} °C`,
            unit: 'mV',
            value: roundSignal(emf - thermocoupleEmf(signal.tcType, cj), 'mV'),
          })
        }
        notes.push(
          `Set the calibrator to simulate a type ${signal.tcType} thermocouple ` +
            'with its own cold-junction compensation, ' +
            `connected with type ${signal.tcType} compensating cable, and dial ${sp} ${eu}.`,
        )
      }
      if (signal.tcType === 'B' && t < 250) {
        flags.push('type_b_low_end')
        notes.push(
          'Below 250 °C a type B thermocouple gives almost no emf (it is slightly negative up to about 42 °C), ' +
            'so a test there is not meaningful; the product does not convert type B readings below 0.291 mV.',
        )
      }
      if (signal.headTransmitter) addHeadTransmitter(instrument, sp, alternatives, flags, notes)
      break
    }
    case 'rtd': {
      const r0 = R0_BY_ELEMENT[signal.element]
      components.setpointC = roundTo(celsiusOf(sp, instrument), 3)
      components.r0Ohm = r0
      components.resistanceOhm = roundTo(main.value, 3)
      notes.push(
        `Connect a resistance source set to ${fmt(main.value, 'ohm')} (${signal.element}, IEC 60751) ` +
          'in place of the element.',
      )
      if (signal.wires === 2) {
        notes.push(
          '2-wire connection: the lead resistance adds to the element resistance; inject at the instrument terminals ' +
            `or allow for the measured lead resistance (about ${roundTo(r0 * 0.0039083, 3)} Ω per °C near 0 °C).`,
        )
      }
      if (signal.headTransmitter) addHeadTransmitter(instrument, sp, alternatives, flags, notes)
      break
    }
    case 'current': {
      const volts = shuntVoltage(main.value)
      components.fractionOfSpan = roundTo((sp - instrument.rangeLow) / (instrument.rangeHigh - instrument.rangeLow), 6)
      alternatives.push({ label: `Voltage across ${SHUNT_OHMS} Ω`, unit: 'V', value: roundSignal(volts, 'V') })
      ne43Flags(main.value, flags)
      if (signal.sqrtExtraction) {
        notes.push(
          'Square-root extraction: I = 4 + 16·(Q/Qmax)² mA with Q measured from the bottom of the range. ' +
            'Check that the root is taken once only, in the transmitter or in the receiving system.',
        )
      }
      if (flags.some((f) => f.startsWith('ne43_'))) {
        notes.push(
          `${fmt(main.value, 'mA')} is outside the NAMUR NE 43 measuring band 3.8 … 20.5 mA: ` +
            'the receiving system may read it as a transmitter failure instead of a trip.',
        )
      }
      break
    }
    case 'voltage':
      components.fractionOfSpan = roundTo((sp - instrument.rangeLow) / (instrument.rangeHigh - instrument.rangeLow), 6)
      break
    case 'switch':
      notes.push(
        'A switch has no analog signal: the test is made against a reference gauge — apply the process variable ' +
          'to the switch, read the trip and reset points on the reference gauge. No signal is injected.',
      )
      break
  }

  // Values at setpoint ± tolerance and at the expected reset point, in engineering units and in the signal unit.
  const points: { label: string; eu: number }[] = []
  if (limit.tolerance !== undefined && limit.tolerance !== null) {
    const tol = toEu(limit.tolerance, limit.toleranceUnit, instrument, 'tolerance')
    points.push({ label: 'Setpoint + tolerance', eu: sp + tol }, { label: 'Setpoint − tolerance', eu: sp - tol })
  } else {
    notes.push('No test tolerance given: the values at setpoint ± tolerance are not shown.')
  }
  const deadband = toEu(limit.deadband, limit.deadbandUnit, instrument, 'deadband')
  points.push({ label: 'Expected reset point', eu: limit.direction === 'high' ? sp - deadband : sp + deadband })
  for (const point of points) {
    alternatives.push({ label: point.label, unit: eu, value: roundSignal(point.eu, 'eu') })
    try {
      const at = signalAt(instrument, point.eu, options)
      if (at.unit !== 'eu')
        alternatives.push({ label: point.label, unit: at.unit, value: roundSignal(at.value, at.unit) })
    } catch (error) {
      if (!(error instanceof OutOfRangeError)) throw error
      if (!flags.includes('alternative_out_of_range')) flags.push('alternative_out_of_range')
      notes.push(`${point.label} (${roundSignal(point.eu, 'eu')} ${eu}) cannot be simulated: ${error.message}.`)
    }
  }

  return {
    unit: main.unit,
    value: roundSignal(main.value, main.unit),
    engineering: { value: sp, unit: eu },
    alternatives,
    components,
    flags,
    notes,
  }
}

function addHeadTransmitter(
  instrument: TestSignalInstrument,
  sp: number,
  alternatives: TestSignalAlternative[],
  flags: string[],
  notes: string[],
): void {
  const mA = currentFromValue(sp, instrument.rangeLow, instrument.rangeHigh)
  alternatives.push({
    label: 'Head transmitter output (linear over the instrument range)',
    unit: 'mA',
    value: roundSignal(mA, 'mA'),
  })
  ne43Flags(mA, flags)
  notes.push(
    `With a head transmitter you may instead inject ${fmt(mA, 'mA')} at its output ` +
      '(the sensor and transmitter are then not tested).',
  )
}

/**
 * Options of `engineeringFromSignal`: the test-signal options plus the unit of the reading
 * (default by signal kind and mode).
 */
export interface SignalReadingOptions extends TestSignalOptions {
  signalUnit?: SignalUnit
}

/** An engineering value derived from a reading in signal units, with NE 43 flags for currents. */
export interface EngineeringReading {
  value: number
  unit: string
  flags: string[]
}

function defaultSignalUnit(signal: TestSignalSpec, options: TestSignalOptions): SignalUnit {
  switch (signal.kind) {
    case 'thermocouple':
      return (options.mode ?? 'mv_source') === 'tc_simulate' ? 'eu' : 'mV'
    case 'rtd':
      return 'ohm'
    case 'current':
      return 'mA'
    case 'voltage':
      return 'V'
    case 'switch':
      return 'eu'
  }
}

/**
 * Converts an as-found/as-left reading entered in signal units into the instrument's engineering unit: mV with the
 * cold junction (emf-domain compensation), ohm (IEC 60751), mA (linear or square root; also a head transmitter's
 * output), V (voltage signal, or the voltage across 250 Ω for a current loop), eu as is.
 * Throws like `computeTestSignal`.
 */
export function engineeringFromSignal(
  instrument: TestSignalInstrument,
  signalValue: number,
  options: SignalReadingOptions = {},
): EngineeringReading {
  if (!Number.isFinite(signalValue)) throw new RangeError(`The reading must be a number, got ${signalValue}`)
  const signal = instrument.signal
  const unit = options.signalUnit ?? defaultSignalUnit(signal, options)
  const flags: string[] = []
  const { rangeLow, rangeHigh } = instrument
  const fromCelsius = (t: number): number => convertValue(t, '°C', instrument.unit)
  const refuse = (): never => {
    throw new UnitConversionError(unit, instrument.unit, `A ${signal.kind} instrument has no reading in ${unit}`)
  }
  let value: number
  if (unit === 'eu') {
    value = signalValue
  } else if (unit === 'mA' || (unit === 'V' && signal.kind === 'current')) {
    const mA = unit === 'mA' ? signalValue : currentFromShuntVoltage(signalValue)
    const isLoop =
      signal.kind === 'current' || ((signal.kind === 'thermocouple' || signal.kind === 'rtd') && signal.headTransmitter)
    if (!isLoop) refuse()
    ne43Flags(mA, flags)
    value =
      signal.kind === 'current' && signal.sqrtExtraction
        ? flowFromSqrtCurrent(mA, rangeLow, rangeHigh)
        : valueFromCurrent(mA, rangeLow, rangeHigh)
  } else if (unit === 'mV' && signal.kind === 'thermocouple') {
    celsiusOf(rangeLow, instrument) // unit check
    value = fromCelsius(temperatureFromMeasured(signal.tcType, signalValue, coldJunction(options)))
  } else if (unit === 'ohm' && signal.kind === 'rtd') {
    celsiusOf(rangeLow, instrument)
    value = fromCelsius(rtdTemperature(signalValue, R0_BY_ELEMENT[signal.element]))
  } else if (unit === 'V' && signal.kind === 'voltage') {
    value = valueFromVoltage(signalValue, rangeLow, rangeHigh, signal)
  } else {
    return refuse()
  }
  return { value: roundSignal(value, 'eu'), unit: instrument.unit, flags }
}
