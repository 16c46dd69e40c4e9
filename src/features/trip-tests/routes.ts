import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/tests',
    alias: '/tests/schedule',
    name: 'test-schedule',
    component: () => import('./views/TestScheduleView.vue'),
    meta: { can: ['read', 'TripTest'], title: 'Trip tests' },
  },
  {
    path: '/tests/new',
    name: 'test-new',
    component: () => import('./views/TripTestFormView.vue'),
    meta: { can: ['record', 'TripTest'], title: 'Record a trip test' },
  },
  {
    path: '/tests/:id(\\d+)',
    name: 'test-detail',
    component: () => import('./views/TripTestDetailView.vue'),
    props: true,
    meta: { can: ['read', 'TripTest'], title: 'Trip test' },
  },
  {
    path: '/tests/:id(\\d+)/edit',
    name: 'test-edit',
    component: () => import('./views/TripTestFormView.vue'),
    props: true,
    meta: { can: ['record', 'TripTest'], title: 'Correct a trip test' },
  },
] satisfies RouteRecordRaw[]
