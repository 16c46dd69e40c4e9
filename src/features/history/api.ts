import type { HistoryImportResult, HistoryMapping } from '@shared/schemas/history-import.ts'
import { http } from '@/api/client'
import { uploadImportFile } from '@/features/register/api'

// The history import (docs/trip-tests.md#history-import), with the register import's upload.

/**
 * Uploads a history file (last tests, commissioning dates, past bypasses) for a dry run, with the upload's
 * progress.
 */
export const uploadHistoryImport = (
  input: { file: File; siteId: number; mapping?: HistoryMapping; dryRun?: boolean },
  onProgress: (fraction: number) => void,
) => uploadImportFile<HistoryImportResult>('/history-imports', input, onProgress)
/** Writes a checked history import, all or nothing. */
export const commitHistoryImport = (id: number) => http.post<HistoryImportResult>(`/history-imports/${id}/commit`)
