import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/audit',
    name: 'audit-events',
    component: () => import('./views/AuditEventListView.vue'),
    meta: { can: ['read', 'AuditEvent'], title: 'Audit trail' },
  },
] satisfies RouteRecordRaw[]
