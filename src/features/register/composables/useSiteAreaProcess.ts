import { useQuery } from '@pinia/colada'
import { computed, watch } from 'vue'
import { useNotificationsStore } from '@/stores/notifications'
import { useSitesStore } from '@/stores/sites'
import { listProcesses, registerKeys } from '../api'

// Where a record of the register stands (the limit and instrument forms): site → area → process, the processes of
// the chosen site loaded once per site; choosing a process sets its area.

export function useSiteAreaProcess(form: { siteId: number | null; areaId: number | null; processId: number | null }) {
  const sites = useSitesStore()
  const notify = useNotificationsStore()
  const query = computed(() => ({ siteId: form.siteId ? [form.siteId] : [] }))
  const { data, error } = useQuery({
    key: () => registerKeys.processList(query.value),
    query: () => listProcesses(query.value),
    enabled: () => !!form.siteId,
  })
  watch(error, (e) => {
    if (e) notify.error(e)
  })
  const processes = computed(() => (form.siteId ? (data.value?.items ?? []) : []))
  const siteItems = computed(() => sites.sites.map((s) => ({ title: `${s.code} · ${s.name}`, value: s.id })))
  const areaItems = computed(() =>
    sites.areas.filter((a) => a.siteId === form.siteId).map((a) => ({ title: a.name, value: a.id })),
  )
  const processItems = computed(() =>
    processes.value
      .filter((p) => !form.areaId || p.areaId === form.areaId)
      .map((p) => ({ title: p.name, value: p.id })),
  )
  watch(
    () => form.processId,
    (id) => {
      const p = processes.value.find((x) => x.id === id)
      if (p && form.areaId !== p.areaId) form.areaId = p.areaId
    },
  )
  return { processes, siteItems, areaItems, processItems }
}
