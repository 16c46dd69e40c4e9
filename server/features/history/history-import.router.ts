import { Router } from 'express'
import { HistoryUploadFieldsSchema } from '../../../shared/schemas/history-import.ts'
import type { AppDeps } from '../../deps.ts'
import { routeHandlers } from '../../route-handlers.ts'
import { mayImport, receiveFile, uploadedFile } from '../register/imports.router.ts'
import * as history from './history-import.service.ts'

/**
 * `/api/history-imports`: upload a history file (last tests, commissioning dates, past bypasses) for a dry run
 * (`POST /`, or committed at once with `dryRun=false`), then commit the batch (`POST /:id/commit`).
 * docs/trip-tests.md#history-import.
 */
export function createHistoryImportsRouter(deps: AppDeps) {
  const router = Router()

  router.post('/', mayImport, receiveFile, async (req, res) => {
    const file = uploadedFile(req, 'history file')
    const fields = HistoryUploadFieldsSchema.parse(req.body ?? {})
    res.status(201).json(await history.checkHistoryImport(deps, req.ability, req.audit, req.user!.id, file, fields))
  })

  router.post('/:id/commit', mayImport, routeHandlers(deps).act(history.commitHistoryImport))

  return router
}
