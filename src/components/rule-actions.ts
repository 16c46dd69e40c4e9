import type { RouteLocationRaw } from 'vue-router'
import type { Verdict } from '@shared/domain/rules/verdict.ts'

/** One workflow action of a record's page, as AppRuleActions shows it: offered and allowed by the rule book. */
export interface RuleAction {
  label: string
  offer: { offered: boolean; verdict: Verdict }
  /** data-test of the button */
  test: string
  icon?: string
  color?: string
  variant?: 'flat' | 'outlined' | 'tonal' | 'text'
  loading?: boolean
  size?: 'small' | 'default'
  /** what the button does: opens a page (`to`, a link) or runs */
  to?: RouteLocationRaw
  run?: () => void
}

/** An action is offered to those whose role allows it; the state may still refuse it (disabled, with the reason). */
export function offerOf(verdict: Verdict): RuleAction['offer'] {
  return { offered: verdict.allowed || verdict.status !== 403, verdict }
}
