import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/shift-handover',
    name: 'shift-handover',
    component: () => import('./views/ShiftHandoverView.vue'),
    meta: { title: 'Shift handover' },
  },
] satisfies RouteRecordRaw[]
