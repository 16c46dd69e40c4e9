import { z } from 'zod'
import { columnMappingSchema, ImportBatchResultSchema, uploadFieldsSchema } from './imports.ts'
import { TEST_METHODS } from './trip-tests.ts'

// The history import (`/api/history-imports`): a migrating site's last trip tests, commissioning (validation) dates
// and past bypasses, one record per row, checked in a dry run and committed all or nothing. The file is read, mapped
// and limited as the register import's (./imports.ts). docs/trip-tests.md#history-import describes the file.

/** The columns of a history file: stable key and the header written in files. */
export const HISTORY_COLUMNS = [
  { key: 'record', header: 'Record' },
  { key: 'tag', header: 'Limit tag' },
  { key: 'date', header: 'Date' },
  { key: 'result', header: 'Result' },
  { key: 'asFound', header: 'As-found' },
  { key: 'asLeft', header: 'As-left' },
  { key: 'method', header: 'Method' },
  { key: 'tester', header: 'Tester' },
  { key: 'start', header: 'Bypass start' },
  { key: 'end', header: 'Bypass end' },
  { key: 'reason', header: 'Reason' },
  { key: 'notes', header: 'Notes' },
] as const
export type HistoryColumnKey = (typeof HISTORY_COLUMNS)[number]['key']
export const HISTORY_COLUMN_KEYS = HISTORY_COLUMNS.map((c) => c.key) as [HistoryColumnKey, ...HistoryColumnKey[]]

/** Columns every history file must have (after mapping); the others depend on the kind of record. */
export const HISTORY_REQUIRED_COLUMNS = ['record', 'tag'] as const satisfies readonly HistoryColumnKey[]

/** What a row records: a trip (proof) test, the limit's commissioning (validation) date, or a past bypass. */
export const HISTORY_RECORD_KINDS = ['test', 'commissioning', 'bypass'] as const
export type HistoryRecordKind = (typeof HISTORY_RECORD_KINDS)[number]

/** The methods a history file may name (those of a recorded test). */
export const HISTORY_TEST_METHODS = TEST_METHODS

/** File header → column key of the history file; an empty string ignores that column. */
export const HistoryMappingSchema = columnMappingSchema(HISTORY_COLUMN_KEYS, 'history file')
export type HistoryMapping = z.infer<typeof HistoryMappingSchema>

/** The text fields sent with the history file. */
export const HistoryUploadFieldsSchema = uploadFieldsSchema(HistoryMappingSchema)
export type HistoryUploadFields = z.infer<typeof HistoryUploadFieldsSchema>

/** What a row without errors writes (`unchanged`: a commissioning date the limit already holds). */
export const HistoryRowResultSchema = z.object({
  row: z.number().int(),
  record: z.enum(HISTORY_RECORD_KINDS),
  tag: z.string(),
  limitId: z.number().int(),
  action: z.enum(['create', 'unchanged']),
  /** one line saying what is written, e.g. "test on 2025-03-04, passed, by R. Oakes" */
  summary: z.string(),
})
export type HistoryRowResult = z.infer<typeof HistoryRowResultSchema>

export const HISTORY_IMPORT_STATUSES = ['checked', 'committed', 'unchanged'] as const

/** The answer of a dry run and of a commit. */
export const HistoryImportResultSchema = ImportBatchResultSchema.extend({
  status: z.enum(HISTORY_IMPORT_STATUSES),
  rows: z.array(HistoryRowResultSchema),
  summary: z.object({
    tests: z.number().int(),
    commissioning: z.number().int(),
    bypasses: z.number().int(),
    unchanged: z.number().int(),
  }),
})
export type HistoryImportResult = z.infer<typeof HistoryImportResultSchema>
