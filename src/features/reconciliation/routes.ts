import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/reconciliation',
    name: 'finding-list',
    component: () => import('./views/FindingListView.vue'),
    meta: { can: ['read', 'Finding'], title: 'Reconciliation findings' },
  },
  {
    path: '/reconciliation/findings/:id(\\d+)',
    name: 'finding-detail',
    component: () => import('./views/FindingDetailView.vue'),
    props: true,
    meta: { can: ['read', 'Finding'], title: 'Finding' },
  },
  {
    path: '/reconciliation/sources',
    name: 'recon-source-list',
    component: () => import('./views/SourceListView.vue'),
    meta: { can: ['read', 'ReconciliationSource'], title: 'Reconciliation sources' },
  },
  {
    path: '/reconciliation/sources/:id(\\d+)',
    name: 'recon-source-detail',
    component: () => import('./views/SourceDetailView.vue'),
    props: true,
    meta: { can: ['read', 'ReconciliationSource'], title: 'Reconciliation source' },
  },
  {
    path: '/reconciliation/runs',
    name: 'recon-run-list',
    component: () => import('./views/RunListView.vue'),
    meta: { can: ['read', 'ReconciliationSource'], title: 'Reconciliation runs' },
  },
] satisfies RouteRecordRaw[]
