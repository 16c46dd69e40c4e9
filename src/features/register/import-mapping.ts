import { IMPORT_REQUIRED_COLUMNS, type ImportMapping } from '@shared/schemas/imports.ts'
import { REGISTER_COLUMNS } from '@shared/schemas/register-io.ts'

// The column mapping of an import file (the register file here, the history file in src/features/history), as the
// mapping step and the check result show it.

/** A file layout: its columns (key and header) and the keys every file must map. */
export interface ImportLayout {
  columns: readonly { key: string; header: string }[]
  required: readonly string[]
  /** The sentence saying which columns every import needs. */
  requiredHint: string
  /** What a column is called in the mapping step ("Register field"). */
  fieldName: string
  /** What to split a file over the size limit by. */
  splitHint: string
}

export const REGISTER_LAYOUT: ImportLayout = {
  columns: REGISTER_COLUMNS,
  required: IMPORT_REQUIRED_COLUMNS,
  requiredHint: 'Every import needs the area, the process, the instrument tag and the limit tag.',
  fieldName: 'Register field',
  splitHint: 'split the register, e.g. by area',
}

const norm = (h: string) => h.trim().toLowerCase().replace(/\s+/g, ' ')

/** The helpers of a layout's mapping. */
export function mappingHelpers(layout: ImportLayout) {
  const labels = new Map<string, string>(layout.columns.map((c) => [c.key, c.header]))
  const required = new Set<string>(layout.required)
  return {
    /** The field of a column key as the file writes it (`tag` → `Limit tag`); `_row` is the row as a whole. */
    fieldLabel: (key: string): string => (key === '_row' ? 'Whole row' : (labels.get(key) ?? key)),
    isRequiredColumn: (key: string) => required.has(key),
    /**
     * Whether a file header already names this column (its header or its key, case does not matter), as the server
     * matches.
     */
    headerNamesColumn: (header: string, key: string): boolean =>
      norm(header) === norm(key) || norm(header) === norm(labels.get(key) ?? ''),
    /** The required columns no header is mapped to. */
    missingRequired: (mapping: Record<string, string>): string[] => {
      const used = new Set(Object.values(mapping))
      return layout.required.filter((k) => !used.has(k))
    },
  }
}

const register = mappingHelpers(REGISTER_LAYOUT)
export const { fieldLabel, isRequiredColumn, headerNamesColumn } = register
export const missingRequired = (mapping: ImportMapping) => register.missingRequired(mapping)

/** Column keys chosen for more than one header, with those headers. */
export function duplicateColumns(mapping: Record<string, string>): Map<string, string[]> {
  const byKey = new Map<string, string[]>()
  for (const [header, key] of Object.entries(mapping)) {
    if (key) byKey.set(key, [...(byKey.get(key) ?? []), header])
  }
  return new Map([...byKey].filter(([, headers]) => headers.length > 1))
}

/** Whether two mappings give every header the same column. */
export function sameMapping(a: Record<string, string>, b: Record<string, string>): boolean {
  const keys = new Set([...Object.keys(a), ...Object.keys(b)])
  return [...keys].every((k) => (a[k] ?? '') === (b[k] ?? ''))
}
