import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/bypasses',
    name: 'bypass-list',
    component: () => import('./views/BypassListView.vue'),
    meta: { title: 'Bypasses' },
  },
  {
    path: '/bypasses/new',
    name: 'bypass-new',
    component: () => import('./views/BypassFormView.vue'),
    meta: { can: ['request', 'Bypass'], title: 'Request a bypass' },
  },
  {
    path: '/bypasses/review',
    name: 'bypass-review',
    component: () => import('./views/BypassReviewView.vue'),
    meta: { can: ['review', 'BypassReview'], title: 'Bypass review' },
  },
  {
    path: '/bypasses/risk',
    name: 'bypass-risk',
    component: () => import('./views/RiskErosionView.vue'),
    meta: { can: ['review', 'BypassReview'], title: 'Risk erosion' },
  },
  {
    path: '/bypasses/:id(\\d+)',
    name: 'bypass-detail',
    component: () => import('./views/BypassDetailView.vue'),
    props: true,
    meta: { title: 'Bypass' },
  },
] satisfies RouteRecordRaw[]
