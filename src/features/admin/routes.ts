import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/admin/users',
    name: 'admin-users',
    component: () => import('./views/UserListView.vue'),
    meta: { can: ['create', 'User'], title: 'Users' },
  },
  {
    path: '/admin/sites',
    name: 'admin-sites',
    component: () => import('./views/SiteListView.vue'),
    meta: { can: ['create', 'Site'], title: 'Sites and policies' },
  },
] satisfies RouteRecordRaw[]
