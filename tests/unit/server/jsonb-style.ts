/**
 * A JSON value written as jsonb writes it out (PostgreSQL's manual, "JSON Types"): members ordered shorter names first,
 * ", " and ": " between.
 */
export function jsonbStyle(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(jsonbStyle).join(', ')}]`
  if (v !== null && typeof v === 'object') {
    const names = Object.keys(v).sort((a, b) => a.length - b.length || (a < b ? -1 : a > b ? 1 : 0))
    const members = names.map((k) => `${JSON.stringify(k)}: ${jsonbStyle((v as Record<string, unknown>)[k])}`)
    return `{${members.join(', ')}}`
  }
  return JSON.stringify(v)
}
