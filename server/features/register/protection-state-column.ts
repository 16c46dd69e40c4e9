import { sql, type Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

/**
 * Recomputes the limit's `protection_state` column (docs/bypasses.md#protection-state, ADR 0004): bypassed while a
 * bypass is active, else degraded while a failed test is not cleared by a passing full retest, else in service. Call
 * it in the transaction that changed either.
 */
export async function refreshProtectionState(
  trx: Transaction<Database>,
  limitId: number,
): Promise<'in_service' | 'bypassed' | 'degraded'> {
  const row = await sql<{ state: 'in_service' | 'bypassed' | 'degraded' }>`
    SELECT CASE
      WHEN EXISTS (SELECT 1 FROM bypass WHERE limit_id = ${limitId} AND status = 'active') THEN 'bypassed'
      WHEN EXISTS (SELECT 1 FROM limit_degradation WHERE limit_id = ${limitId} AND cleared_at IS NULL) THEN 'degraded'
      ELSE 'in_service' END AS state`.execute(trx)
  const state = row.rows[0].state
  await trx
    .updateTable('limit_function')
    .set({ protection_state: state })
    .where('id', '=', limitId)
    .where('protection_state', '!=', state)
    .execute()
  return state
}
