import type { z } from 'zod'

/** A readable message for a schema issue whose own message is generic (type and union mismatches). */
function messageOf(issue: z.ZodError['issues'][number]): string {
  if (issue.code === 'invalid_union') return 'Enter a number'
  if (issue.code === 'invalid_type') return issue.expected === 'number' ? 'Enter a number' : 'Required'
  if (issue.code === 'invalid_value') return 'Choose one of the options'
  return issue.message
}

/**
 * Schema issues as field messages keyed by dotted path (`subsystems.0.lambdaDu`), as the API sends them; `missing`
 * gives the message for a field that was not filled in at all (e.g. a picker left empty).
 */
export function issuesToFields(
  issues: z.ZodError['issues'],
  missing: Record<string, string> = {},
): Record<string, string[]> {
  const fields: Record<string, string[]> = {}
  for (const issue of issues) {
    const key = issue.path.map(String).join('.') || '_'
    const list = (fields[key] ??= [])
    const msg =
      missing[key] && (issue.code === 'invalid_type' || issue.code === 'invalid_value')
        ? missing[key]
        : messageOf(issue)
    if (!list.includes(msg)) list.push(msg)
  }
  return fields
}

/** A typed number, or undefined when left empty (NaN stays, so the schema reports it). */
export function toNumber(s: string | number | null | undefined): number | undefined {
  if (s === null || s === undefined) return undefined
  if (typeof s === 'number') return s
  const t = s.trim()
  return t === '' ? undefined : Number(t)
}

/** A number as the form edits it. */
export const toText = (v: number | null | undefined) => (v === null || v === undefined ? '' : String(v))
