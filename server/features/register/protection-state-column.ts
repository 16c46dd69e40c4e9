import type { Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'
import type { Limit } from '../../../shared/schemas/register.ts'
import { findProtectionFacts, setProtectionState } from './limits.repository.ts'

/**
 * Recomputes the limit's `protection_state` column (docs/bypasses.md#protection-state, ADR 0004): bypassed while a
 * bypass is active, else degraded while a failed test is not cleared by a passing full retest, else in service. Call
 * it in the transaction that changed either.
 */
export async function refreshProtectionState(
  trx: Transaction<Database>,
  limitId: number,
): Promise<Limit['protectionState']> {
  const { bypassed, degraded } = await findProtectionFacts(trx, limitId)
  const state = bypassed ? 'bypassed' : degraded ? 'degraded' : 'in_service'
  await setProtectionState(trx, limitId, state)
  return state
}
