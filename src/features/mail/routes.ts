import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/mail',
    name: 'mail-outbox',
    component: () => import('./views/MailOutboxView.vue'),
    meta: { can: ['read', 'Mail'], title: 'Mail' },
  },
] satisfies RouteRecordRaw[]
