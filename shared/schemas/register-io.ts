// The flat register file (CSV / XLSX): one row per limit function with its primary instrument. The same columns are
// written by the export and read by the import, so an exported file imports back unchanged.

/** A column of the register file: its stable key and the header written in files. */
export interface RegisterColumn {
  key: string
  header: string
}

export const REGISTER_COLUMNS = [
  { key: 'site', header: 'Site code' },
  { key: 'area', header: 'Area' },
  { key: 'process', header: 'Process' },
  { key: 'instrumentTag', header: 'Instrument tag' },
  { key: 'votedInstrumentTags', header: 'Other voted instrument tags' },
  { key: 'measuredVariable', header: 'Measured variable' },
  { key: 'unit', header: 'Unit' },
  { key: 'pressureReference', header: 'Pressure reference' },
  { key: 'rangeLow', header: 'Range low' },
  { key: 'rangeHigh', header: 'Range high' },
  { key: 'normalLow', header: 'Normal low' },
  { key: 'normalHigh', header: 'Normal high' },
  { key: 'designLow', header: 'Design low' },
  { key: 'designHigh', header: 'Design high' },
  { key: 'burnout', header: 'Burnout' },
  { key: 'signal', header: 'Signal' },
  { key: 'headTransmitter', header: 'Head transmitter' },
  { key: 'deviceKind', header: 'Device kind' },
  { key: 'deviceDescription', header: 'Device' },
  { key: 'model', header: 'Model' },
  { key: 'tag', header: 'Limit tag' },
  { key: 'description', header: 'Description' },
  { key: 'direction', header: 'Direction' },
  { key: 'limitClass', header: 'Class' },
  { key: 'setpoint', header: 'Setpoint' },
  { key: 'deadband', header: 'Deadband' },
  { key: 'deadbandUnit', header: 'Deadband unit' },
  { key: 'onDelaySec', header: 'On-delay s' },
  { key: 'offDelaySec', header: 'Off-delay s' },
  { key: 'latching', header: 'Latching' },
  { key: 'resetRole', header: 'Reset by' },
  { key: 'badValueTrip', header: 'Trips on bad value' },
  { key: 'action', header: 'Action' },
  { key: 'consequence', header: 'Consequence' },
  { key: 'operatorResponse', header: 'Operator response' },
  { key: 'responseTimeMin', header: 'Time to respond min' },
  { key: 'severity', header: 'Severity' },
  { key: 'impactCategory', header: 'Consequence category' },
  { key: 'alarmType', header: 'Alarm type' },
  { key: 'causes', header: 'Causes' },
  { key: 'confirmation', header: 'How to confirm' },
  { key: 'safetyRelatedAlarm', header: 'Safety-related alarm' },
  { key: 'claimedRiskReduction', header: 'Claimed risk reduction' },
  { key: 'analyticalLimit', header: 'Analytical limit' },
  { key: 'processSafetyTimeSec', header: 'Process safety time s' },
  { key: 'requiredResponseTimeSec', header: 'Required response time s' },
  { key: 'bypassPermitted', header: 'Bypass permitted' },
  { key: 'maxBypassHours', header: 'Longest bypass h' },
  { key: 'compensatingMeasures', header: 'Compensating measures' },
  { key: 'testIntervalMonths', header: 'Test interval months' },
  { key: 'testGraceDays', header: 'Test grace days' },
  { key: 'codeSetInterval', header: 'Interval set by code' },
  { key: 'sil', header: 'SIL' },
  { key: 'subsystems', header: 'Subsystems (JSON)' },
] as const satisfies readonly RegisterColumn[]

export type RegisterColumnKey = (typeof REGISTER_COLUMNS)[number]['key']
export type RegisterFileRow = Record<RegisterColumnKey, string>

/**
 * The signal as one cell: `thermocouple K`, `rtd Pt100 3-wire`, `4-20mA`, `4-20mA sqrt`, `voltage 0-10V`, `switch`.
 */
export function signalToText(s: {
  kind: string
  tcType?: string
  element?: string
  wires?: number
  sqrtExtraction?: boolean
  low?: number
  high?: number
}): string {
  switch (s.kind) {
    case 'thermocouple':
      return `thermocouple ${s.tcType}`
    case 'rtd':
      return `rtd ${s.element} ${s.wires}-wire`
    case 'current':
      return s.sqrtExtraction ? '4-20mA sqrt' : '4-20mA'
    case 'voltage':
      return `voltage ${s.low}-${s.high}V`
    default:
      return 'switch'
  }
}

/** Parses the signal cell back; null when it is not understood. */
export function signalFromText(text: string, headTransmitter: boolean): Record<string, unknown> | null {
  const t = text.trim().toLowerCase().replace(/\s+/g, ' ')
  let m = /^(?:thermocouple|tc)(?: type)? ([bejknrst])$/.exec(t)
  if (m) return { kind: 'thermocouple', tcType: m[1].toUpperCase(), headTransmitter }
  m = /^rtd (pt100|pt1000)(?: ([234])-wire)?$/.exec(t)
  if (m)
    return { kind: 'rtd', element: m[1] === 'pt100' ? 'Pt100' : 'Pt1000', wires: Number(m[2] ?? 3), headTransmitter }
  if (/^4-20 ?ma( sqrt)?$/.test(t)) return { kind: 'current', sqrtExtraction: t.endsWith('sqrt') }
  m = /^voltage ([01])-(5|10) ?v$/.exec(t)
  if (m) return { kind: 'voltage', low: Number(m[1]), high: Number(m[2]) }
  if (t === 'switch') return { kind: 'switch' }
  return null
}
