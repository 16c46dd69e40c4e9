import { HISTORY_COLUMNS, HISTORY_REQUIRED_COLUMNS } from '@shared/schemas/history-import.ts'
import type { ImportLayout } from '@/features/register/import-mapping'

/** The history file's layout for the register import's wizard (docs/trip-tests.md#history-import). */
export const HISTORY_LAYOUT: ImportLayout = {
  columns: HISTORY_COLUMNS,
  required: HISTORY_REQUIRED_COLUMNS,
  requiredHint: 'Every history file needs the kind of record and the limit tag.',
  fieldName: 'History field',
  splitHint: 'split the history, e.g. by area',
}
