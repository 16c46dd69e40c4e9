import { HistoryUploadFieldsSchema } from '../../../shared/schemas/history-import.ts'
import type { AppDeps } from '../../deps.ts'
import { importRouter } from '../register/imports.router.ts'
import * as history from './history-import.service.ts'

/**
 * `/api/history-imports`: upload a history file (last tests, commissioning dates, past bypasses) for a dry run
 * (`POST /`, or committed at once with `dryRun=false`), then commit the batch (`POST /:id/commit`).
 * docs/trip-tests.md#history-import.
 */
export function createHistoryImportsRouter(deps: AppDeps) {
  return importRouter(
    deps,
    'history file',
    HistoryUploadFieldsSchema,
    history.checkHistoryImport,
    history.commitHistoryImport,
  )
}
