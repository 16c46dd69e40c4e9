// Alarm priority from consequence severity × maximum time to respond, and the classification rules of the register
// (alarm, alert, trip; SIL; safety-related alarms). docs/domain/alarm-classification.md explains each rule.
// The principle (priority follows severity and time to respond) is ISA-18.2 / IEC 62682; the cut-offs
// and cells are site policy (the site's alarm philosophy), common practice with no standard behind the numbers.

/** Consequence severity of a limit, mildest first. */
export type Severity = 'minor' | 'moderate' | 'major' | 'severe'

/** Alarm priority, lowest first. */
export type AlarmPriority = 'low' | 'medium' | 'high' | 'critical'

/**
 * One cell of the matrix: a priority, or 'alert' where the time to respond is so long that the condition is not
 * urgent enough for an alarm: it is registered as an alert (annunciated without alarm priority; ISA-18.2-2016 tells
 * alerts from alarms, from memory) or left to a log, unless the site's alarm philosophy gives it the lowest priority.
 */
export type PriorityCell = AlarmPriority | 'alert'

/** Every priority, lowest first. */
export const ALARM_PRIORITIES: readonly AlarmPriority[] = ['low', 'medium', 'high', 'critical']

/** Every severity, mildest first. */
export const SEVERITIES: readonly Severity[] = ['minor', 'moderate', 'major', 'severe']

/**
 * A priority matrix as a plain JSON-able object, so a site policy can override it.
 * `responseTimeBoundsMin` holds the column boundaries in minutes, ascending: column 0 is t < bounds[0],
 * column i is bounds[i − 1] ≤ t < bounds[i], the last column is t ≥ bounds[last].
 * Each row has one cell per column.
 */
export interface PriorityMatrix {
  responseTimeBoundsMin: number[]
  rows: Record<Severity, PriorityCell[]>
}

/**
 * Site-policy default: columns < 3 min, 3 to < 10, 10 to < 30, ≥ 30 min; the last column is an alert
 * (docs/domain/alarm-classification.md). Common practice, no standard behind the numbers.
 */
export const DEFAULT_PRIORITY_MATRIX: PriorityMatrix = {
  responseTimeBoundsMin: [3, 10, 30],
  rows: {
    severe: ['critical', 'critical', 'high', 'alert'],
    major: ['critical', 'high', 'medium', 'alert'],
    moderate: ['high', 'medium', 'low', 'alert'],
    minor: ['medium', 'low', 'low', 'alert'],
  },
}

/** How a site names and colours a priority (colour: a theme colour name or a #rrggbb value). */
export interface PriorityStyle {
  label: string
  color: string
}

/**
 * The parts of the site's alarm philosophy the register applies (site policy).
 * - `longResponseAs`: what an 'alert' cell of the matrix means for an alarm: `alert` (refused as an alarm, register
 *   it as an alert) or `lowest_priority` (kept as an alarm with the lowest priority).
 * - `shortResponseMin`: below this time to respond, a major or severe consequence warns that operator action alone
 *   may not be credited as a protection layer (about 10 min is common practice in layer-of-protection analysis).
 * - `priorities`: the site's names and colours for each priority.
 */
export interface AlarmPhilosophy {
  longResponseAs: 'alert' | 'lowest_priority'
  shortResponseMin: number
  priorities: Record<AlarmPriority, PriorityStyle>
}

/** The default alarm philosophy: the product's priority names and colours, alerts for slow conditions. */
export const DEFAULT_ALARM_PHILOSOPHY: AlarmPhilosophy = {
  longResponseAs: 'alert',
  shortResponseMin: 10,
  priorities: {
    low: { label: 'Low', color: 'secondary' },
    medium: { label: 'Medium', color: 'info' },
    high: { label: 'High', color: 'warning' },
    critical: { label: 'Critical', color: 'error' },
  },
}

/**
 * Result of a priority derivation; `priority` is null when the cell says "alert" and the site's philosophy keeps
 * such conditions out of the alarms (`alertCell` is true for an alert cell either way).
 */
export interface PriorityDerivation {
  priority: AlarmPriority | null
  column: number
  columnLabel: string
  row: Severity
  alertCell: boolean
  explanation: string
}

const CELLS: readonly PriorityCell[] = ['low', 'medium', 'high', 'critical', 'alert']

/** Lists what is wrong with a (site-supplied) matrix; an empty list means it is usable. */
export function checkPriorityMatrix(matrix: PriorityMatrix): string[] {
  const problems: string[] = []
  const bounds = matrix.responseTimeBoundsMin
  if (!Array.isArray(bounds) || bounds.length === 0) {
    problems.push('responseTimeBoundsMin must list at least one boundary')
  } else {
    bounds.forEach((b, i) => {
      if (!Number.isFinite(b) || b <= 0) problems.push(`boundary ${i} must be a positive number of minutes`)
      else if (i > 0 && !(b > bounds[i - 1])) problems.push(`boundary ${i} must be greater than boundary ${i - 1}`)
    })
  }
  const columns = Array.isArray(bounds) ? bounds.length + 1 : 0
  for (const severity of SEVERITIES) {
    const row = matrix.rows?.[severity]
    if (!Array.isArray(row)) {
      problems.push(`row ${severity} is missing`)
      continue
    }
    if (row.length !== columns) problems.push(`row ${severity} must have ${columns} cells`)
    row.forEach((cell, i) => {
      if (!CELLS.includes(cell)) problems.push(`row ${severity} cell ${i} must be one of ${CELLS.join(', ')}`)
    })
  }
  return problems
}

/** Human label of a column, e.g. '< 3 min', '3–10 min', '≥ 30 min'. */
export function columnLabel(matrix: PriorityMatrix, column: number): string {
  const b = matrix.responseTimeBoundsMin
  if (column <= 0) return `< ${b[0]} min`
  if (column >= b.length) return `≥ ${b[b.length - 1]} min`
  return `${b[column - 1]}–${b[column]} min`
}

/** Column index for a time to respond: lower boundary inclusive, upper exclusive (3 min falls in '3–10 min'). */
export function responseTimeColumn(matrix: PriorityMatrix, responseTimeMin: number): number {
  if (!Number.isFinite(responseTimeMin) || responseTimeMin < 0) {
    throw new RangeError('time to respond must be a finite number of minutes ≥ 0')
  }
  const b = matrix.responseTimeBoundsMin
  let column = 0
  while (column < b.length && responseTimeMin >= b[column]) column++
  return column
}

/**
 * Derives the alarm priority for a severity and a maximum time to respond (minutes) from a matrix. An 'alert' cell
 * gives no priority, or the lowest one where the philosophy says `lowest_priority`.
 */
export function derivePriority(
  severity: Severity,
  responseTimeMin: number,
  matrix: PriorityMatrix = DEFAULT_PRIORITY_MATRIX,
  philosophy: Pick<AlarmPhilosophy, 'longResponseAs'> = DEFAULT_ALARM_PHILOSOPHY,
): PriorityDerivation {
  const problems = checkPriorityMatrix(matrix)
  if (problems.length > 0) throw new RangeError(`invalid priority matrix: ${problems.join('; ')}`)
  if (!SEVERITIES.includes(severity)) throw new RangeError(`unknown severity: ${String(severity)}`)
  const column = responseTimeColumn(matrix, responseTimeMin)
  const label = columnLabel(matrix, column)
  const cell = matrix.rows[severity][column]
  const alertCell = cell === 'alert'
  const lowest = alertCell && philosophy.longResponseAs === 'lowest_priority'
  const outcome = !alertCell
    ? cell
    : lowest
      ? "low (not urgent: the site's alarm philosophy gives it the lowest priority)"
      : 'alert (not urgent enough for an alarm)'
  return {
    priority: alertCell ? (lowest ? 'low' : null) : cell,
    column,
    columnLabel: label,
    row: severity,
    alertCell,
    explanation: `severity ${severity} × respond in ${label} → ${outcome}`,
  }
}

/** The fields of a limit that its classification rules read. */
export interface ClassifiedLimit {
  limitClass: 'alarm' | 'alert' | 'trip'
  severity: Severity
  responseTimeMin: number | null | undefined
  sil: number | null | undefined
  safetyRelatedAlarm?: boolean
  claimedRiskReduction?: number | null
}

/** A finding of the classification rules, keyed to the form field it concerns. */
export interface ClassificationFinding {
  code:
    | 'ALARM_NOT_URGENT'
    | 'OPERATOR_TOO_SLOW'
    | 'MATRIX_INVALID'
    | 'SIL_NOT_TRIP'
    | 'SAFETY_ALARM_NOT_ALARM'
    | 'RISK_REDUCTION_MISSING'
    | 'RISK_REDUCTION_RANGE'
    | 'RISK_REDUCTION_NOT_CLAIMED'
    | 'RESPONSE_TIME_MISSING'

  field: string
  message: string
}

/** Largest risk reduction an alarm may claim as a protection layer (IEC 61511-1 §9, from memory: ≤ 10). */
export const MAX_ALARM_RISK_REDUCTION = 10

/**
 * The classification rules that need no site policy, for the zod boundary as well as for the evaluation:
 * SIL 1–3 belong to safety instrumented functions (trips, IEC 61511); an alarm may instead be marked as a
 * safety-related alarm credited as a protection layer with a risk reduction of at most 10; an alarm needs the
 * time the operator has to respond.
 */
export function structuralClassificationErrors(limit: Partial<ClassifiedLimit>): ClassificationFinding[] {
  const errors: ClassificationFinding[] = []
  if (limit.sil != null && limit.limitClass !== undefined && limit.limitClass !== 'trip') {
    errors.push({
      code: 'SIL_NOT_TRIP',
      field: 'sil',
      message:
        'A SIL belongs to a safety instrumented function (a trip); mark an alarm credited as a protection layer ' +
        'as a safety-related alarm instead',
    })
  }
  if (limit.safetyRelatedAlarm === true && limit.limitClass !== undefined && limit.limitClass !== 'alarm') {
    errors.push({
      code: 'SAFETY_ALARM_NOT_ALARM',
      field: 'safetyRelatedAlarm',
      message: 'Only an alarm can be a safety-related alarm',
    })
  }
  const rr = limit.claimedRiskReduction
  if (limit.safetyRelatedAlarm === true && rr == null) {
    errors.push({
      code: 'RISK_REDUCTION_MISSING',
      field: 'claimedRiskReduction',
      message: `Enter the risk reduction the hazard study claims for this alarm (at most ${MAX_ALARM_RISK_REDUCTION})`,
    })
  }
  if (rr != null && (!Number.isFinite(rr) || rr < 1 || rr > MAX_ALARM_RISK_REDUCTION)) {
    errors.push({
      code: 'RISK_REDUCTION_RANGE',
      field: 'claimedRiskReduction',
      message: `An alarm may claim a risk reduction from 1 to ${MAX_ALARM_RISK_REDUCTION}, never more`,
    })
  }
  if (rr != null && limit.safetyRelatedAlarm === false) {
    errors.push({
      code: 'RISK_REDUCTION_NOT_CLAIMED',
      field: 'claimedRiskReduction',
      message: 'Only a safety-related alarm claims a risk reduction',
    })
  }
  if (limit.limitClass === 'alarm' && limit.responseTimeMin == null) {
    errors.push({
      code: 'RESPONSE_TIME_MISSING',
      field: 'responseTimeMin',
      message: 'An alarm needs the time the operator has to respond',
    })
  }
  return errors
}

export interface Classification {
  priority: AlarmPriority | null
  explanation: string
  errors: ClassificationFinding[]
  warnings: ClassificationFinding[]
}

/**
 * The priority and the classification findings of a limit under the site's matrix and alarm philosophy; the one
 * place the register's form and the server read these rules from (docs/domain/alarm-classification.md).
 * - a trip acts by itself: no operator priority;
 * - an alert is annunciated without alarm priority and is not counted among the alarms;
 * - an alarm in an 'alert' cell is refused unless the philosophy gives it the lowest priority;
 * - an alarm (or a safety-related alarm) with less than `shortResponseMin` to respond and a major or severe
 *   consequence is warned: operator action alone may not be credited (common practice in LOPA).
 */
export function classifyLimit(
  limit: ClassifiedLimit,
  matrix: PriorityMatrix = DEFAULT_PRIORITY_MATRIX,
  philosophy: AlarmPhilosophy = DEFAULT_ALARM_PHILOSOPHY,
): Classification {
  const errors: ClassificationFinding[] = structuralClassificationErrors(limit)
  const warnings: ClassificationFinding[] = []
  if (limit.limitClass === 'trip') {
    return { priority: null, explanation: 'A trip acts by itself; no operator priority', errors, warnings }
  }
  if (limit.limitClass === 'alert') {
    return {
      priority: null,
      explanation: 'An alert is annunciated without alarm priority and is not counted among the alarms',
      errors,
      warnings,
    }
  }
  if (limit.responseTimeMin == null || !Number.isFinite(limit.responseTimeMin) || limit.responseTimeMin < 0) {
    return { priority: null, explanation: 'Enter severity and time to respond', errors, warnings }
  }
  const problems = checkPriorityMatrix(matrix)
  if (problems.length > 0) {
    errors.push({
      code: 'MATRIX_INVALID',
      field: 'responseTimeMin',
      message: `The site's priority matrix is not usable: ${problems.join('; ')}`,
    })
    return { priority: null, explanation: '', errors, warnings }
  }
  const d = derivePriority(limit.severity, limit.responseTimeMin, matrix, philosophy)
  if (d.alertCell && d.priority === null) {
    errors.push({
      code: 'ALARM_NOT_URGENT',
      field: 'limitClass',
      message:
        `With ${d.columnLabel} to respond this condition is not urgent enough for an alarm (${d.explanation}): ` +
        'register it as an alert',
    })
  }
  if (
    limit.responseTimeMin < philosophy.shortResponseMin &&
    (limit.severity === 'major' || limit.severity === 'severe')
  ) {
    warnings.push({
      code: 'OPERATOR_TOO_SLOW',
      field: 'responseTimeMin',
      message:
        `Less than ${philosophy.shortResponseMin} min to respond to a ${limit.severity} consequence: operator ` +
        'action alone may not be credited as a protection layer; consider an automatic function (a trip)',
    })
  }
  return { priority: d.priority, explanation: d.explanation, errors, warnings }
}
