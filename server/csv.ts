import Papa from 'papaparse'

/**
 * A cell a spreadsheet would run as a formula: it starts with `=`, `+`, `-`, `@`, a tab or a carriage return, and is
 * not a plain number (a negative setpoint such as `-12.5` stays a number). OWASP, "CSV Injection" (owasp.org/www-
 * community/attacks/CSV_Injection): prefix such a cell with a single quote and quote the field (docs/security.md,
 * "Exports").
 */
export const FORMULA_CELL = /^(?![-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$)[=+\-@\t\r]/

/** A quote put before a formula-like cell on export; taken off again when a file is imported. */
export function unneutraliseCell(text: string): string {
  return text.length > 1 && text[0] === "'" && /[=+\-@\t\r]/.test(text[1]) ? text.slice(1) : text
}

/** CSV text of rows (objects or arrays) with every formula-like cell neutralised; starts with a BOM for Excel. */
export function toCsv(data: Papa.UnparseObject<unknown[]> | Record<string, unknown>[]): string {
  return `\uFEFF${Papa.unparse(data as never, { escapeFormulae: FORMULA_CELL })}`
}

/**
 * One part of a CSV written in pieces (an export read in pages): the BOM and the header row with the first part, rows
 * only after it; each part ends with a line break. Cells are neutralised as in toCsv.
 */
export function csvPart(fields: string[], rows: unknown[][], first: boolean): string {
  const text = Papa.unparse({ fields, data: rows }, { escapeFormulae: FORMULA_CELL, header: first })
  return `${first ? '\uFEFF' : ''}${text}${text ? '\r\n' : ''}`
}
