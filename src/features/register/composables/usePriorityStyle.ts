import { DEFAULT_ALARM_PHILOSOPHY, type AlarmPriority, type PriorityStyle } from '@shared/domain/priority.ts'
import { useSitesStore } from '@/stores/sites'

/**
 * The name and colour of an alarm priority as the site's alarm philosophy sets them (site policy), with the
 * product's defaults until the sites are loaded.
 */
export function usePriorityStyle() {
  const sites = useSitesStore()
  return (siteId: number, priority: AlarmPriority): PriorityStyle =>
    sites.siteOf(siteId)?.policy.alarmPhilosophy?.priorities[priority] ?? DEFAULT_ALARM_PHILOSOPHY.priorities[priority]
}
