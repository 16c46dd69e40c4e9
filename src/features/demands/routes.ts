import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/demands',
    name: 'demand-list',
    component: () => import('./views/DemandListView.vue'),
    meta: { can: ['read', 'Demand'], title: 'Demands and trips' },
  },
  {
    path: '/demands/failure-rates',
    name: 'failure-rates',
    component: () => import('./views/FailureRatesView.vue'),
    meta: { can: ['read', 'Demand'], title: 'Observed failure rates' },
  },
  {
    path: '/demands/:id(\\d+)',
    name: 'demand-detail',
    component: () => import('./views/DemandDetailView.vue'),
    props: true,
    meta: { can: ['read', 'Demand'], title: 'Demand' },
  },
] satisfies RouteRecordRaw[]
