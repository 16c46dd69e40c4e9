import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/register/import-history',
    name: 'history-import',
    component: () => import('./views/HistoryImportView.vue'),
    meta: { can: ['import', 'Limit'], title: 'Import history' },
  },
] satisfies RouteRecordRaw[]
