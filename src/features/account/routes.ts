import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/account',
    name: 'account',
    component: () => import('./views/AccountView.vue'),
    meta: { title: 'My account' },
  },
] satisfies RouteRecordRaw[]
