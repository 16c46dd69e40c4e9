import { ErrorCode } from '../../../shared/errors.ts'
import { AppError } from '../../errors.ts'

// Mapping a file's headers to the column keys of a file layout: shared by the register import and the upload of
// configuration exports (docs/register.md#column-mapping).

export const normHeader = (h: string) => h.trim().toLowerCase().replace(/\s+/g, ' ')

/** A file the reader cannot take at all (400, nothing stored). */
export function badFile(message: string, details: Record<string, unknown> = {}): AppError {
  return new AppError(400, ErrorCode.VALIDATION_FAILED, message, { fields: { file: [message] }, ...details })
}

/**
 * The column key of each header: the explicit mapping first, then the layout's own headers (or keys), case does not
 * matter, then the remembered mapping. Unknown headers are ignored. Two headers on one key, or a required key
 * without a column, refuse the file with the headers, the mapping so far and the layout's columns (to map them).
 */
export function resolveColumnMapping<K extends string>(
  headers: string[],
  columns: readonly { key: K; header: string }[],
  required: readonly K[],
  explicit: Record<string, string> | undefined,
  remembered: Record<string, string>,
  hint: string,
): { keys: (K | null)[]; used: Record<string, string>; ignored: string[] } {
  const headerOf = new Map<string, string>(columns.map((c) => [c.key, c.header]))
  const label = (k: string) => headerOf.get(k) ?? k
  const byHeader = new Map<string, K>(
    columns.flatMap(
      (c) =>
        [
          [normHeader(c.header), c.key],
          [normHeader(c.key), c.key],
        ] as const,
    ),
  )
  const lookup = (m: Record<string, string> | undefined, h: string) => {
    if (!m) return undefined
    if (Object.hasOwn(m, h)) return m[h]
    const found = Object.keys(m).find((k) => normHeader(k) === normHeader(h))
    return found === undefined ? undefined : m[found]
  }
  const keys: (K | null)[] = []
  const used = new Map<string, string>()
  const ignored: string[] = []
  for (const h of headers) {
    if (!h) {
      keys.push(null)
      continue
    }
    const chosen = lookup(explicit, h) ?? byHeader.get(normHeader(h)) ?? lookup(remembered, h)
    keys.push(chosen ? (chosen as K) : null)
    used.set(h, chosen ?? '')
    if (!chosen) ignored.push(h)
  }
  const seen = new Map<string, string>()
  const twice: string[] = []
  keys.forEach((k, i) => {
    if (!k) return
    if (seen.has(k)) twice.push(`"${seen.get(k)}" and "${headers[i]}" both map to ${label(k)}`)
    else seen.set(k, headers[i])
  })
  const layout = columns.map((c) => ({ key: c.key, header: c.header }))
  const mapping = Object.fromEntries(used)
  if (twice.length)
    throw badFile(`Two columns map to the same field: ${twice.join('; ')}`, { headers, mapping, columns: layout })
  const missing = required.filter((k) => !seen.has(k))
  if (missing.length) {
    throw badFile(`The file has no column for ${missing.map(label).join(', ')}: ${hint}`, {
      headers,
      mapping,
      missing,
      columns: layout,
    })
  }
  return { keys, used: mapping, ignored }
}
