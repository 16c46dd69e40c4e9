// The comparison of a source's values (an uploaded configuration export, or a device's registers) with the
// register's active values (docs/reconciliation.md#comparison). Pure: explicit inputs, no I/O, no clock.

import type { FindingKind, ReconAttribute } from '../schemas/reconciliation.ts'
import { normalizeDecimal } from './modbus-decode.ts'
import { canonicalUnit, convertDifference, convertValue } from './units.ts'

/** What the register holds for one limit (its active values) and whether a bypass of it is on record. */
export interface RegisterLimit {
  limitId: number
  tag: string
  status: string
  areaId: number
  /** The engineering unit of the limit's primary instrument. */
  unit: string
  setpoint: string
  deadband: string
  deadbandUnit: string
  rangeLow: string
  rangeHigh: string
  onDelaySec: string
  offDelaySec: string
  priority: string | null
  latching: boolean
  /** An active bypass is on record (authorizes a bypass or force flag, and a disabled alarm). */
  bypassActive: boolean
}

/** One value a source holds for one attribute of one tag. */
export interface Observation {
  tag: string
  attribute: ReconAttribute
  value: string
  unit: string | null
  /** A float read from a device: equal within one float32 step unless a tolerance says more. */
  float?: boolean
  /** Largest difference still equal, in the register's unit (per map entry or per source attribute). */
  tolerance?: string | null
}

/** A value an approved change request, not yet implemented, puts on the device (explains a difference). */
export interface PendingChange {
  limitId: number
  attribute: ReconAttribute
  to: string
  changeRequestId: number
}

export interface Difference {
  kind: Exclude<FindingKind, 'unreachable'>
  limitId: number | null
  tag: string
  attribute: string
  registerValue: string | null
  deviceValue: string | null
  unit: string | null
  detail: string
}

export interface LimitOutcome {
  limitId: number
  matched: boolean
  differences: string[]
}

export interface ReconcileResult {
  differences: Difference[]
  limits: LimitOutcome[]
  limitsCompared: number
  attributesCompared: number
  /** Observations that could not be compared (unknown unit, unreadable value), with the reason. */
  problems: { tag: string; attribute: string; message: string }[]
  /** Differences an approved change request explains (no finding). */
  explained: { limitId: number; attribute: ReconAttribute; changeRequestId: number }[]
}

export interface ReconcileInput {
  limits: readonly RegisterLimit[]
  observations: readonly Observation[]
  /** Tags of the register that the source should hold (active limits of its areas); missing ones are findings. */
  expectedLimitIds: ReadonlySet<number>
  pending?: readonly PendingChange[]
  /** Per-attribute tolerance of the source, in the register's unit. */
  tolerances?: Partial<Record<ReconAttribute, string>>
}

export const normTag = (t: string) => t.trim().toUpperCase()

const TRUE = new Set(['1', 'true', 'yes', 'y', 'on', 'x', 'set', 'active', 'enabled'])
const FALSE = new Set(['0', 'false', 'no', 'n', 'off', 'clear', 'inactive', 'disabled', ''])

/** A flag cell or register as true/false; null when it is neither. */
export function parseFlag(text: string): boolean | null {
  const t = text.trim().toLowerCase()
  if (TRUE.has(t)) return true
  if (FALSE.has(t)) return false
  return null
}

// time units of delays (1 min = 60 s, 1 h = 3600 s, 1 ms = 0.001 s: definitions of the SI brochure, from memory)
const SECONDS: Record<string, number> = { s: 1, sec: 1, second: 1, seconds: 1, ms: 0.001, min: 60, h: 3600 }

const DECIMAL = /^-?\d+(\.\d+)?([eE][-+]?\d+)?$/

function nearlyEqual(a: number, b: number, tolerance: number, float: boolean): boolean {
  // one step of a float32 near the value is 2^-23 of it (IEEE 754 binary32, 24-bit significand)
  const floatStep = float ? Math.max(Math.abs(a), Math.abs(b)) * 2 ** -23 : 0
  // conversions between units leave noise of a few double-precision steps
  const noise = Math.max(Math.abs(a), Math.abs(b)) * 1e-12
  return Math.abs(a - b) <= tolerance + floatStep + noise
}

/** Deadband of the register in the instrument's engineering unit. */
function deadbandEu(l: RegisterLimit): number {
  const db = Number(l.deadband)
  return l.deadbandUnit === 'percent_span' ? (db * (Number(l.rangeHigh) - Number(l.rangeLow))) / 100 : db
}

type Compared = { equal: boolean; registerText: string; deviceText: string; unit: string | null } | { problem: string }

function compareNumber(l: RegisterLimit, o: Observation, tolerance: string | undefined | null): Compared {
  const value = o.value.trim()
  if (!DECIMAL.test(value)) return { problem: `"${o.value}" is not a number` }
  const tol = tolerance ? Math.abs(Number(tolerance)) : 0
  if (o.attribute === 'onDelaySec' || o.attribute === 'offDelaySec') {
    const reg = o.attribute === 'onDelaySec' ? l.onDelaySec : l.offDelaySec
    const u = (o.unit ?? 's').trim().toLowerCase() || 's'
    const factor = SECONDS[u]
    if (factor === undefined) return { problem: `unknown time unit "${o.unit}" (use s, ms, min or h)` }
    if (factor === 1 && !o.float && !tol)
      return {
        equal: normalizeDecimal(reg) === normalizeDecimal(value),
        registerText: normalizeDecimal(reg),
        deviceText: normalizeDecimal(value),
        unit: 's',
      }
    const seconds = Number(value) * factor
    return {
      equal: nearlyEqual(Number(reg), seconds, tol, !!o.float),
      registerText: normalizeDecimal(reg),
      deviceText: normalizeDecimal(String(seconds)),
      unit: 's',
    }
  }
  const from = o.unit?.trim() || l.unit
  let sameUnit = from === l.unit
  let device: number
  try {
    if (!sameUnit) sameUnit = canonicalUnit(from) === canonicalUnit(l.unit) && convertValue(1, from, l.unit) === 1
    device = sameUnit
      ? Number(value)
      : o.attribute === 'deadband'
        ? convertDifference(Number(value), from, l.unit)
        : convertValue(Number(value), from, l.unit)
  } catch (err) {
    return { problem: err instanceof Error ? err.message : String(err) }
  }
  if (o.attribute === 'setpoint') {
    if (sameUnit && !o.float && !tol)
      return {
        equal: normalizeDecimal(l.setpoint) === normalizeDecimal(value),
        registerText: normalizeDecimal(l.setpoint),
        deviceText: normalizeDecimal(value),
        unit: l.unit,
      }
    return {
      equal: nearlyEqual(Number(l.setpoint), device, tol, !!o.float),
      registerText: normalizeDecimal(l.setpoint),
      deviceText: normalizeDecimal(String(Number(device.toPrecision(12)))),
      unit: l.unit,
    }
  }
  // deadband
  if (sameUnit && !o.float && !tol && l.deadbandUnit !== 'percent_span')
    return {
      equal: normalizeDecimal(l.deadband) === normalizeDecimal(value),
      registerText: normalizeDecimal(l.deadband),
      deviceText: normalizeDecimal(value),
      unit: l.unit,
    }
  const reg = deadbandEu(l)
  return {
    equal: nearlyEqual(reg, device, tol, !!o.float),
    registerText: normalizeDecimal(String(Number(reg.toPrecision(12)))),
    deviceText: normalizeDecimal(String(Number(device.toPrecision(12)))),
    unit: l.unit,
  }
}

const LABEL: Record<ReconAttribute, string> = {
  setpoint: 'setpoint',
  deadband: 'deadband',
  onDelaySec: 'on-delay',
  offDelaySec: 'off-delay',
  priority: 'priority',
  enabled: 'enabled',
  latching: 'latching',
  bypassed: 'bypass/force flag',
}
export const attributeLabel = (a: string) => LABEL[a as ReconAttribute] ?? a

/**
 * Compares every observation of every matched tag with the register. Findings kinds:
 * changed_without_moc (a value differs and no approved change explains it), not_in_register (the source holds a tag
 * the register has no active limit for), missing_on_device (an expected active limit the source does not hold),
 * bypassed_without_authorization (a bypass/force flag set with no active bypass on record), disabled (an alarm or
 * trip disabled with no active bypass on record).
 */
export function reconcile(input: ReconcileInput): ReconcileResult {
  const byTag = new Map<string, RegisterLimit>()
  for (const l of input.limits) byTag.set(normTag(l.tag), l)
  const pending = new Map<string, PendingChange[]>()
  for (const p of input.pending ?? []) {
    const k = `${p.limitId}|${p.attribute}`
    pending.set(k, [...(pending.get(k) ?? []), p])
  }
  const explained: ReconcileResult['explained'] = []
  const explainedBy = (l: RegisterLimit, attribute: ReconAttribute, device: string) => {
    const p = (pending.get(`${l.limitId}|${attribute}`) ?? []).find((c) => c.to === device)
    if (p) explained.push({ limitId: l.limitId, attribute, changeRequestId: p.changeRequestId })
    return !!p
  }
  const grouped = new Map<string, Observation[]>()
  for (const o of input.observations) {
    const k = normTag(o.tag)
    const list = grouped.get(k)
    if (list) list.push(o)
    else grouped.set(k, [o])
  }
  const differences: Difference[] = []
  const problems: ReconcileResult['problems'] = []
  const limits: LimitOutcome[] = []
  const seen = new Set<number>()
  let attributesCompared = 0

  for (const [key, obs] of grouped) {
    const l = byTag.get(key)
    if (!l || l.status !== 'active') {
      differences.push({
        kind: 'not_in_register',
        limitId: l?.limitId ?? null,
        tag: l?.tag ?? obs[0].tag.trim(),
        attribute: '',
        registerValue: l ? l.status : null,
        deviceValue: obs.map((o) => `${attributeLabel(o.attribute)} ${o.value}`).join('; '),
        unit: null,
        detail: l
          ? `The source holds ${l.tag}; the register holds it as ${l.status}, not active.`
          : `The source holds ${obs[0].tag.trim()}; the register has no limit with this tag.`,
      })
      continue
    }
    seen.add(l.limitId)
    const found: string[] = []
    const differ = (d: Omit<Difference, 'limitId' | 'tag'>) => {
      differences.push({ ...d, limitId: l.limitId, tag: l.tag })
      found.push(`${attributeLabel(d.attribute)}: ${d.kind}`)
    }
    for (const o of obs) {
      attributesCompared++
      if (o.attribute === 'enabled' || o.attribute === 'bypassed' || o.attribute === 'latching') {
        const flag = parseFlag(o.value)
        if (flag === null) {
          problems.push({ tag: l.tag, attribute: o.attribute, message: `"${o.value}" is not yes or no` })
          continue
        }
        if (o.attribute === 'enabled' && !flag && !l.bypassActive)
          differ({
            kind: 'disabled',
            attribute: 'enabled',
            registerValue: 'yes',
            deviceValue: 'no',
            unit: null,
            detail: `${l.tag} is disabled on the source, and no active bypass is on record.`,
          })
        if (o.attribute === 'bypassed' && flag && !l.bypassActive)
          differ({
            kind: 'bypassed_without_authorization',
            attribute: 'bypassed',
            registerValue: 'no',
            deviceValue: 'yes',
            unit: null,
            detail: `The bypass or force flag of ${l.tag} is set on the source, and no active bypass is on record.`,
          })
        if (o.attribute === 'latching' && flag !== l.latching) {
          if (!explainedBy(l, 'latching', String(flag)))
            differ({
              kind: 'changed_without_moc',
              attribute: 'latching',
              registerValue: l.latching ? 'yes' : 'no',
              deviceValue: flag ? 'yes' : 'no',
              unit: null,
              detail: `Latching differs from the register and no approved change explains it.`,
            })
        }
        continue
      }
      if (o.attribute === 'priority') {
        if (l.priority === null) continue
        const dev = o.value.trim().toLowerCase()
        if (dev !== l.priority.toLowerCase())
          differ({
            kind: 'changed_without_moc',
            attribute: 'priority',
            registerValue: l.priority,
            deviceValue: o.value.trim(),
            unit: null,
            detail: 'The alarm priority differs from the register and no approved change explains it.',
          })
        continue
      }
      const c = compareNumber(l, o, o.tolerance ?? input.tolerances?.[o.attribute])
      if ('problem' in c) {
        problems.push({ tag: l.tag, attribute: o.attribute, message: c.problem })
        continue
      }
      if (c.equal) continue
      if (explainedBy(l, o.attribute, c.deviceText)) continue
      differ({
        kind: 'changed_without_moc',
        attribute: o.attribute,
        registerValue: c.registerText,
        deviceValue: c.deviceText,
        unit: c.unit,
        detail:
          `The ${attributeLabel(o.attribute)} differs from the register ` +
          `(${c.registerText} → ${c.deviceText}${c.unit ? ` ${c.unit}` : ''}) and no approved change explains it.`,
      })
    }
    limits.push({ limitId: l.limitId, matched: found.length === 0, differences: found })
  }

  for (const l of input.limits) {
    if (!input.expectedLimitIds.has(l.limitId) || seen.has(l.limitId) || l.status !== 'active') continue
    differences.push({
      kind: 'missing_on_device',
      limitId: l.limitId,
      tag: l.tag,
      attribute: '',
      registerValue: `setpoint ${normalizeDecimal(l.setpoint)} ${l.unit}`,
      deviceValue: null,
      unit: null,
      detail: `${l.tag} is an active limit the source should hold, and the source does not hold it.`,
    })
    limits.push({ limitId: l.limitId, matched: false, differences: ['missing_on_device'] })
  }
  return {
    differences,
    limits,
    limitsCompared: seen.size,
    attributesCompared,
    problems,
    explained,
  }
}

// Spellings of attributes in configuration exports (case and spaces do not matter): common practice.
const ATTRIBUTE_ALIASES: Record<string, { attribute: ReconAttribute; invert?: boolean }> = {}
const alias = (attribute: ReconAttribute, names: string[], invert = false) => {
  for (const n of names) ATTRIBUTE_ALIASES[n] = invert ? { attribute, invert } : { attribute }
}
alias('setpoint', ['setpoint', 'sp', 'set point', 'limit', 'trip setpoint', 'alarm setpoint', 'trip point', 'value'])
alias('deadband', ['deadband', 'db', 'dead band', 'hysteresis', 'hyst'])
alias('onDelaySec', ['ondelaysec', 'on delay', 'ondelay', 'on_delay', 'delay on', 'on-delay', 'alarm delay'])
alias('offDelaySec', ['offdelaysec', 'off delay', 'offdelay', 'off_delay', 'delay off', 'off-delay'])
alias('priority', ['priority', 'prio', 'alarm priority'])
alias('enabled', ['enabled', 'enable', 'alarm enabled', 'in service'])
alias('enabled', ['disabled', 'suppressed', 'inhibited', 'out of service'], true)
alias('latching', ['latching', 'latch', 'latched'])
alias('bypassed', ['bypassed', 'bypass', 'force', 'forced', 'maintenance', 'override', 'bypass state', 'force state'])

/** The attribute an export's attribute cell names, and whether its flag is stated the other way round. */
export function attributeOf(text: string): { attribute: ReconAttribute; invert?: boolean } | null {
  const t = text
    .trim()
    .toLowerCase()
    .replace(/[_\s]+/g, ' ')
  return ATTRIBUTE_ALIASES[t] ?? ATTRIBUTE_ALIASES[t.replace(/ /g, '')] ?? null
}
