import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/admin/sites',
    name: 'admin-sites',
    component: () => import('./views/SiteListView.vue'),
    meta: { can: ['create', 'Site'], title: 'Sites and policies' },
  },
] satisfies RouteRecordRaw[]
