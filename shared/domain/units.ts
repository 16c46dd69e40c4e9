import { OutOfRangeError, UnitConversionError } from './errors.ts'

/**
 * Engineering-unit conversion for process values (absolute values, with offsets) and for differences
 * (deadbands, tolerances: no offset, 1 K = 1.8 °F). Gauge and absolute pressure are kept apart: a pressure unit
 * may carry a reference suffix, `bar(g)` / `bar(a)` (also `barg`, `bara`, `psig`, `psia`), and moving between
 * them needs an explicit atmospheric pressure.
 */

/** Measured variables of an instrument (DOMAIN §3). */
export type MeasuredVariable = 'temperature' | 'pressure' | 'level' | 'flow' | 'analytical' | 'other'

/** Known units per measured variable, for pickers (analytical and other units are free text, not converted). */
export const UNITS_BY_VARIABLE: Readonly<Record<MeasuredVariable, readonly string[]>> = {
  temperature: ['°C', '°F', 'K'],
  pressure: ['Pa', 'kPa', 'MPa', 'bar', 'mbar', 'psi', 'kg/cm²', 'mmH2O', 'inH2O', 'mmHg'],
  level: ['%', 'm', 'mm'],
  flow: ['m³/h', 'L/min', 'L/s', 'kg/h', 'kg/s', 't/h'],
  analytical: [],
  other: [],
}

type Dimension = 'temperature' | 'pressure' | 'level_percent' | 'length' | 'volume_flow' | 'mass_flow'

interface UnitDef {
  dimension: Dimension
  factor: number
}

// Standard acceleration of free fall g_n = 9.80665 m/s² (exact by definition; CGPM 1901, from memory).
const G_N = 9.80665
// 1 in = 0.0254 m and 1 lb = 0.45359237 kg exactly (international yard and pound, 1959; from memory).
const INCH = 0.0254
const POUND = 0.45359237

// Factors to the coherent SI unit of the dimension (Pa, m, m³/s, kg/s). Temperature factors are the size of one
// degree in kelvin (used for differences); absolute temperatures go through °C below.
const UNITS: Record<string, UnitDef> = {
  '°C': { dimension: 'temperature', factor: 1 },
  K: { dimension: 'temperature', factor: 1 },
  '°F': { dimension: 'temperature', factor: 5 / 9 },
  Pa: { dimension: 'pressure', factor: 1 },
  kPa: { dimension: 'pressure', factor: 1e3 },
  MPa: { dimension: 'pressure', factor: 1e6 },
  bar: { dimension: 'pressure', factor: 1e5 },
  mbar: { dimension: 'pressure', factor: 1e2 },
  // pound-force per square inch = lb·g_n / in² = 6894.757… Pa (exact from the definitions above)
  psi: { dimension: 'pressure', factor: (POUND * G_N) / (INCH * INCH) },
  // kilogram-force per square centimetre = g_n / 1e-4 m² = 98 066.5 Pa (exact)
  'kg/cm²': { dimension: 'pressure', factor: G_N * 1e4 },
  // conventional water column: ρ = 1000 kg/m³, g_n (the convention mathjs also uses; from memory)
  mmH2O: { dimension: 'pressure', factor: G_N },
  inH2O: { dimension: 'pressure', factor: 25.4 * G_N },
  // conventional millimetre of mercury = 133.322 387 415 Pa (ρ = 13 595.1 kg/m³, g_n; NIST SP 811 value from memory)
  mmHg: { dimension: 'pressure', factor: 133.322387415 },
  '%': { dimension: 'level_percent', factor: 1 },
  m: { dimension: 'length', factor: 1 },
  mm: { dimension: 'length', factor: 1e-3 },
  'm³/h': { dimension: 'volume_flow', factor: 1 / 3600 },
  'L/min': { dimension: 'volume_flow', factor: 1e-3 / 60 },
  'L/s': { dimension: 'volume_flow', factor: 1e-3 },
  'kg/h': { dimension: 'mass_flow', factor: 1 / 3600 },
  'kg/s': { dimension: 'mass_flow', factor: 1 },
  't/h': { dimension: 'mass_flow', factor: 1000 / 3600 },
}

// Other spellings accepted on input (case-sensitive: mbar ≠ Mbar, K ≠ k).
const ALIASES: Record<string, string> = {
  degC: '°C',
  '℃': '°C',
  'deg C': '°C',
  degF: '°F',
  '℉': '°F',
  'deg F': '°F',
  'kg/cm2': 'kg/cm²',
  'kgf/cm2': 'kg/cm²',
  'kgf/cm²': 'kg/cm²',
  'mmH₂O': 'mmH2O',
  mmWC: 'mmH2O',
  'inH₂O': 'inH2O',
  inWC: 'inH2O',
  'm3/h': 'm³/h',
  'l/min': 'L/min',
  'l/s': 'L/s',
}

// Trade spellings of gauge/absolute pressure units.
const REFERENCED: Record<string, { unit: string; reference: 'g' | 'a' }> = {
  barg: { unit: 'bar', reference: 'g' },
  bara: { unit: 'bar', reference: 'a' },
  psig: { unit: 'psi', reference: 'g' },
  psia: { unit: 'psi', reference: 'a' },
}

interface ParsedUnit {
  symbol: string
  def: UnitDef
  reference?: 'g' | 'a'
}

function parse(unit: string, other = ''): ParsedUnit {
  const text = typeof unit === 'string' ? unit.trim() : ''
  const referenced = REFERENCED[text]
  if (referenced) return { symbol: referenced.unit, def: UNITS[referenced.unit]!, reference: referenced.reference }
  const match = /^(.*?)\s*\((g|a)\)$/.exec(text)
  const bare = match ? match[1]! : text
  const symbol = Object.hasOwn(ALIASES, bare) ? ALIASES[bare]! : bare
  const def = Object.hasOwn(UNITS, symbol) ? UNITS[symbol] : undefined
  if (!def) throw new UnitConversionError(String(unit), other, `Unknown unit '${String(unit)}'`)
  if (match && def.dimension !== 'pressure') {
    throw new UnitConversionError(String(unit), other, `Only pressure units take (g) or (a): '${String(unit)}'`)
  }
  return match ? { symbol, def, reference: match[2] as 'g' | 'a' } : { symbol, def }
}

/** True when the unit (or an accepted spelling of it) is known to the converter. */
export function isKnownUnit(unit: string): boolean {
  try {
    parse(unit)
    return true
  } catch {
    return false
  }
}

/**
 * The canonical symbol of a known unit (e.g. 'degC' → '°C', 'bar(g)' → 'bar');
 * throws UnitConversionError if unknown.
 */
export function canonicalUnit(unit: string): string {
  return parse(unit).symbol
}

/** The measured variable a known unit belongs to ('%' is listed under level); throws if unknown. */
export function variableOfUnit(unit: string): MeasuredVariable {
  const dimension = parse(unit).def.dimension
  if (dimension === 'temperature' || dimension === 'pressure') return dimension
  return dimension === 'level_percent' || dimension === 'length' ? 'level' : 'flow'
}

/** Options of `convertValue`. */
export interface ConvertOptions {
  /** Atmospheric (barometric) pressure, absolute, needed only to convert between gauge and absolute pressure. */
  atmosphericPressure?: { value: number; unit: string }
}

function sameDimension(a: ParsedUnit, b: ParsedUnit, from: string, to: string): void {
  if (a.def.dimension !== b.def.dimension) {
    throw new UnitConversionError(from, to, `Cannot convert '${from}' to '${to}': different quantities`)
  }
}

function toCelsius(value: number, symbol: string): number {
  if (symbol === 'K') return value - 273.15
  if (symbol === '°F') return (value - 32) / 1.8
  return value
}

function fromCelsius(value: number, symbol: string): number {
  if (symbol === 'K') return value + 273.15
  if (symbol === '°F') return value * 1.8 + 32
  return value
}

function atmosphericPa(options: ConvertOptions, from: string, to: string): number {
  const atm = options.atmosphericPressure
  if (!atm) {
    throw new UnitConversionError(
      from,
      to,
      `Converting '${from}' to '${to}' moves between gauge and absolute pressure and needs the atmospheric pressure`,
    )
  }
  const parsed = parse(atm.unit)
  if (parsed.def.dimension !== 'pressure' || parsed.reference === 'g') {
    throw new UnitConversionError(atm.unit, '', 'The atmospheric pressure must be an absolute pressure')
  }
  const pa = atm.value * parsed.def.factor
  if (!(Number.isFinite(pa) && pa > 0))
    throw new OutOfRangeError('atmospheric pressure', atm.value, 0, Number.POSITIVE_INFINITY, atm.unit)
  return pa
}

/**
 * Converts an absolute value (a reading, setpoint or range end) between units of the same quantity, with the
 * temperature offset. Gauge ↔ absolute needs `options.atmosphericPressure`; a pressure unit with a reference on one
 * side only is refused. Unknown or incompatible units throw UnitConversionError; temperatures below absolute zero
 * throw OutOfRangeError.
 */
export function convertValue(value: number, from: string, to: string, options: ConvertOptions = {}): number {
  const a = parse(from, to)
  const b = parse(to, from)
  sameDimension(a, b, from, to)
  if (!Number.isFinite(value)) throw new RangeError(`The value to convert must be a finite number, got ${value}`)
  if (a.def.dimension === 'temperature') {
    const celsius = toCelsius(value, a.symbol)
    if (celsius < -273.15) {
      throw new OutOfRangeError(
        'temperature',
        value,
        fromCelsius(-273.15, a.symbol),
        Number.POSITIVE_INFINITY,
        a.symbol,
        'below absolute zero',
      )
    }
    return a.symbol === b.symbol ? value : fromCelsius(celsius, b.symbol)
  }
  if (a.def.dimension === 'pressure') {
    if ((a.reference === undefined) !== (b.reference === undefined)) {
      throw new UnitConversionError(
        from,
        to,
        `Cannot convert '${from}' to '${to}': state gauge (g) or absolute (a) on both sides or on neither`,
      )
    }
    // An absolute pressure cannot be below zero (perfect vacuum), as a temperature cannot be below absolute zero.
    if (a.reference === 'a' && value < 0) {
      throw new OutOfRangeError('absolute pressure', value, 0, Number.POSITIVE_INFINITY, from, 'below perfect vacuum')
    }
    let pa = value * a.def.factor
    if (a.reference !== b.reference) pa += (a.reference === 'g' ? 1 : -1) * atmosphericPa(options, from, to)
    if (b.reference === 'a' && pa < 0) {
      const atm = atmosphericPa(options, from, to) / a.def.factor
      throw new OutOfRangeError('gauge pressure', value, -atm, Number.POSITIVE_INFINITY, from, 'below perfect vacuum')
    }
    return a.symbol === b.symbol && a.reference === b.reference ? value : pa / b.def.factor
  }
  return a.symbol === b.symbol ? value : (value * a.def.factor) / b.def.factor
}

/**
 * Converts a difference (deadband, tolerance, error, span) between units of the same quantity: no offset, so
 * 1 K = 1 °C = 1.8 °F, and gauge/absolute references do not matter. Unknown or incompatible units throw.
 */
export function convertDifference(value: number, from: string, to: string): number {
  const a = parse(from, to)
  const b = parse(to, from)
  sameDimension(a, b, from, to)
  if (!Number.isFinite(value)) throw new RangeError(`The difference to convert must be a finite number, got ${value}`)
  if (a.def.dimension === 'temperature') {
    if (a.def.factor === b.def.factor) return value
    return b.symbol === '°F' ? value * 1.8 : value / 1.8
  }
  return a.symbol === b.symbol ? value : (value * a.def.factor) / b.def.factor
}
