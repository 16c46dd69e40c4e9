// Alarm priority from consequence severity × maximum time to respond (DOMAIN.md §6 site policy).
// The principle (priority follows severity and time to respond) is ISA-18.2 / IEC 62682; the cut-offs
// and cells are site policy, common practice with no standard behind the numbers.

/** Consequence severity of a limit, mildest first. */
export type Severity = 'minor' | 'moderate' | 'major' | 'severe'

/** Alarm priority, lowest first. */
export type AlarmPriority = 'low' | 'medium' | 'high' | 'critical'

/** One cell of the matrix: a priority, or 'none' for "no alarm" (the function should be a trip or nothing). */
export type PriorityCell = AlarmPriority | 'none'

/** Every severity, mildest first. */
export const SEVERITIES: readonly Severity[] = ['minor', 'moderate', 'major', 'severe']

/**
 * A priority matrix as a plain JSON-able object, so a site policy can override it.
 * `responseTimeBoundsMin` holds the column boundaries in minutes, ascending: column 0 is t < bounds[0],
 * column i is bounds[i − 1] ≤ t < bounds[i], the last column is t ≥ bounds[last]. Each row has one cell per column.
 */
export interface PriorityMatrix {
  responseTimeBoundsMin: number[]
  rows: Record<Severity, PriorityCell[]>
}

/** Site-policy default (DOMAIN.md §6): columns < 3 min, 3 to < 10, 10 to < 30, ≥ 30 min. */
export const DEFAULT_PRIORITY_MATRIX: PriorityMatrix = {
  responseTimeBoundsMin: [3, 10, 30],
  rows: {
    severe: ['critical', 'critical', 'high', 'none'],
    major: ['critical', 'high', 'medium', 'none'],
    moderate: ['high', 'medium', 'low', 'none'],
    minor: ['medium', 'low', 'low', 'none'],
  },
}

/** Result of a priority derivation; `priority` is null when the cell says "no alarm". */
export interface PriorityDerivation {
  priority: AlarmPriority | null
  column: number
  columnLabel: string
  row: Severity
  noAlarm: boolean
  explanation: string
}

const CELLS: readonly PriorityCell[] = ['low', 'medium', 'high', 'critical', 'none']

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

/** Derives the alarm priority for a severity and a maximum time to respond (minutes) from a matrix. */
export function derivePriority(
  severity: Severity,
  responseTimeMin: number,
  matrix: PriorityMatrix = DEFAULT_PRIORITY_MATRIX,
): PriorityDerivation {
  const problems = checkPriorityMatrix(matrix)
  if (problems.length > 0) throw new RangeError(`invalid priority matrix: ${problems.join('; ')}`)
  if (!SEVERITIES.includes(severity)) throw new RangeError(`unknown severity: ${String(severity)}`)
  const column = responseTimeColumn(matrix, responseTimeMin)
  const label = columnLabel(matrix, column)
  const cell = matrix.rows[severity][column]
  const noAlarm = cell === 'none'
  const outcome = noAlarm ? 'no alarm (make it a trip or nothing)' : cell
  return {
    priority: noAlarm ? null : cell,
    column,
    columnLabel: label,
    row: severity,
    noAlarm,
    explanation: `severity ${severity} × respond in ${label} → ${outcome}`,
  }
}
