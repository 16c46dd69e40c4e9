import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/changes',
    name: 'change-list',
    component: () => import('./views/ChangeListView.vue'),
    meta: { title: 'Changes' },
  },
  {
    path: '/changes/new',
    name: 'change-new',
    component: () => import('./views/ChangeFormView.vue'),
    meta: { can: ['create', 'ChangeRequest'], title: 'New change request' },
  },
  {
    path: '/changes/:id(\\d+)',
    name: 'change-detail',
    component: () => import('./views/ChangeDetailView.vue'),
    props: true,
    meta: { title: 'Change request' },
  },
  {
    path: '/changes/:id(\\d+)/edit',
    name: 'change-edit',
    component: () => import('./views/ChangeFormView.vue'),
    props: true,
    meta: { can: ['update', 'ChangeRequest'], title: 'Edit change request' },
  },
] satisfies RouteRecordRaw[]
