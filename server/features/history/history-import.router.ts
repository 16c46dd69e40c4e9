import { Router } from 'express'
import { IdSchema } from '../../../shared/schemas/common.ts'
import { HistoryUploadFieldsSchema } from '../../../shared/schemas/history-import.ts'
import type { AppDeps } from '../../deps.ts'
import { validationFailed } from '../../errors.ts'
import { mayImport, receiveFile } from '../register/imports.router.ts'
import * as history from './history-import.service.ts'

/**
 * `/api/history-imports`: upload a history file (last tests, commissioning dates, past bypasses) for a dry run
 * (`POST /`, or committed at once with `dryRun=false`), then commit the batch (`POST /:id/commit`).
 * docs/trip-tests.md#history-import.
 */
export function createHistoryImportsRouter(deps: AppDeps) {
  const router = Router()

  router.post('/', mayImport, receiveFile, async (req, res) => {
    if (!req.file)
      throw validationFailed(
        { file: ['Attach the history file (CSV or XLSX) in the form field "file"'] },
        'Attach the history file (CSV or XLSX) in the form field "file"',
      )
    const fields = HistoryUploadFieldsSchema.parse(req.body ?? {})
    const result = await history.checkHistoryImport(
      deps,
      req.ability,
      req.audit,
      req.user!.id,
      { buffer: req.file.buffer, fileName: req.file.originalname },
      fields,
    )
    res.status(201).json(result)
  })

  router.post('/:id/commit', mayImport, async (req, res) => {
    res.json(await history.commitHistoryImport(deps, req.ability, req.audit, IdSchema.parse(req.params.id)))
  })

  return router
}
