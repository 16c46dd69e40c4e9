import { z } from 'zod'
import { IdSchema, jsonFormField } from './common.ts'
import { REGISTER_COLUMNS, type RegisterColumnKey } from './register-io.ts'

// The register import (`/api/imports`): upload a CSV or XLSX file in the register file layout (REGISTER_COLUMNS),
// check it in a dry run, then commit it all or nothing. docs/register.md describes the file and the rules.

/** Largest file accepted, in bytes. */
export const IMPORT_MAX_BYTES = 5 * 1024 * 1024
/** Most data rows one file may hold (split larger registers, e.g. by area). */
export const IMPORT_MAX_ROWS = 2000

export const REGISTER_COLUMN_KEYS = REGISTER_COLUMNS.map((c) => c.key) as [RegisterColumnKey, ...RegisterColumnKey[]]

/** Columns a file must have (after mapping); every other column is optional. */
export const IMPORT_REQUIRED_COLUMNS = [
  'area',
  'process',
  'instrumentTag',
  'tag',
] as const satisfies readonly RegisterColumnKey[]

/** A mapping of file headers to the column keys of a layout; an empty string ignores that column. */
export function columnMappingSchema<K extends string>(keys: readonly [K, ...K[]], layout: string) {
  return z
    .record(
      z.string().trim().min(1).max(200),
      z.union([z.enum(keys, `Map each header to a column key of the ${layout}, or to "" to ignore it`), z.literal('')]),
    )
    .refine((m) => Object.keys(m).length <= 500, 'A mapping holds at most 500 headers')
}

/** File header → column key; an empty string ignores that column. */
export const ImportMappingSchema = columnMappingSchema(REGISTER_COLUMN_KEYS, 'register file')
export type ImportMapping = z.infer<typeof ImportMappingSchema>

/** A multipart form field holding JSON (the mapping). */
const jsonText = jsonFormField('The mapping must be a JSON object (file header → column key)')

/** The text fields sent with an import's file (multipart form fields are strings), for a layout's mapping schema. */
export function uploadFieldsSchema<M extends z.ZodType>(mapping: M) {
  return z.object({
    siteId: IdSchema,
    mapping: jsonText.pipe(mapping).optional(),
    dryRun: z
      .enum(['true', 'false'], 'dryRun is true or false')
      .default('true')
      .transform((v) => v === 'true'),
  })
}

/** The text fields sent with the register file. */
export const ImportUploadFieldsSchema = uploadFieldsSchema(ImportMappingSchema)
export type ImportUploadFields = z.infer<typeof ImportUploadFieldsSchema>

export const IMPORT_ACTIONS = ['create', 'update', 'unchanged'] as const
export type ImportAction = (typeof IMPORT_ACTIONS)[number]
export const IMPORT_STATUSES = ['checked', 'committed', 'unchanged'] as const

/** One problem of one row; `row` counts as the spreadsheet does (header = row 1), `field` is the column key. */
export const ImportErrorSchema = z.object({ row: z.number().int(), field: z.string(), message: z.string() })
export type ImportError = z.infer<typeof ImportErrorSchema>

/** What a row without errors does to the register; `warnings` are the stored operating-window warnings. */
export const ImportRowResultSchema = z.object({
  row: z.number().int(),
  tag: z.string(),
  action: z.enum(IMPORT_ACTIONS),
  changes: z.array(z.string()),
  warnings: z.array(z.object({ code: z.string(), field: z.string().optional(), message: z.string() })),
})
export type ImportRowResult = z.infer<typeof ImportRowResultSchema>

/**
 * What the answer of a dry run and of a commit says of its batch, in the register import and the history import
 * alike: the file, how its columns were read and the errors of its rows.
 */
export const ImportBatchResultSchema = z.object({
  id: z.number().int(),
  siteId: z.number().int(),
  fileName: z.string(),
  checksum: z.string(),
  rowCount: z.number().int(),
  mapping: z.record(z.string(), z.string()),
  ignoredColumns: z.array(z.string()),
  errors: z.array(ImportErrorSchema),
})

/** The answer of a dry run and of a commit. */
export const ImportResultSchema = ImportBatchResultSchema.extend({
  status: z.enum(IMPORT_STATUSES),
  rows: z.array(ImportRowResultSchema),
  summary: z.object({ create: z.number().int(), update: z.number().int(), unchanged: z.number().int() }),
  limitIds: z.array(z.number().int()).optional(),
  /** The draft change request opened for the imported baseline (null when nothing new needs approving). */
  changeRequestId: z.number().int().nullable().optional(),
})
export type ImportResult = z.infer<typeof ImportResultSchema>
