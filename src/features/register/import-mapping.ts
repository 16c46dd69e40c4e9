import { IMPORT_REQUIRED_COLUMNS, type ImportMapping } from '@shared/schemas/imports.ts'
import { REGISTER_COLUMNS } from '@shared/schemas/register-io.ts'

// The column mapping of the register import, as the mapping step and the check result show it.

const LABELS = new Map<string, string>(REGISTER_COLUMNS.map((c) => [c.key, c.header]))
const REQUIRED = new Set<string>(IMPORT_REQUIRED_COLUMNS)

/** The register field of a column key as the file writes it (`tag` → `Limit tag`); `_row` is the row as a whole. */
export function fieldLabel(key: string): string {
  if (key === '_row') return 'Whole row'
  return LABELS.get(key) ?? key
}

export const isRequiredColumn = (key: string) => REQUIRED.has(key)

const norm = (h: string) => h.trim().toLowerCase().replace(/\s+/g, ' ')

/** Whether a file header already names this column (its header or its key, case does not matter), as the server matches. */
export function headerNamesColumn(header: string, key: string): boolean {
  return norm(header) === norm(key) || norm(header) === norm(LABELS.get(key) ?? '')
}

/** The required columns no header is mapped to. */
export function missingRequired(mapping: ImportMapping): string[] {
  const used = new Set(Object.values(mapping))
  return IMPORT_REQUIRED_COLUMNS.filter((k) => !used.has(k))
}

/** Column keys chosen for more than one header, with those headers. */
export function duplicateColumns(mapping: ImportMapping): Map<string, string[]> {
  const byKey = new Map<string, string[]>()
  for (const [header, key] of Object.entries(mapping)) {
    if (key) byKey.set(key, [...(byKey.get(key) ?? []), header])
  }
  return new Map([...byKey].filter(([, headers]) => headers.length > 1))
}

/** Whether two mappings give every header the same column. */
export function sameMapping(a: ImportMapping, b: ImportMapping): boolean {
  const keys = new Set([...Object.keys(a), ...Object.keys(b)])
  return [...keys].every((k) => (a[k] ?? '') === (b[k] ?? ''))
}
