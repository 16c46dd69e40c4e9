import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/alarms',
    name: 'alarm-figures',
    component: () => import('./views/AlarmFiguresView.vue'),
    meta: { title: 'Alarm performance' },
  },
  {
    path: '/alarms/journals',
    name: 'alarm-journals',
    component: () => import('./views/AlarmJournalsView.vue'),
    meta: { title: 'Alarm journals' },
  },
  {
    path: '/alarms/states',
    name: 'alarm-states',
    component: () => import('./views/AlarmStatesView.vue'),
    meta: { title: 'Shelved, suppressed and out-of-service alarms' },
  },
  {
    path: '/alarms/replay',
    name: 'alarm-replay',
    component: () => import('./views/ReplayView.vue'),
    meta: { title: 'Replay a limit' },
  },
] satisfies RouteRecordRaw[]
