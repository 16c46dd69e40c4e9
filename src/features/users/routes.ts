import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/admin/users',
    name: 'admin-users',
    component: () => import('./views/UserListView.vue'),
    meta: { can: ['create', 'User'], title: 'Users' },
  },
  {
    path: '/account',
    name: 'account',
    component: () => import('./views/AccountView.vue'),
    meta: { title: 'My account' },
  },
] satisfies RouteRecordRaw[]
