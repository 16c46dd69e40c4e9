import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/proposals',
    name: 'proposal-list',
    component: () => import('./views/ProposalListView.vue'),
    meta: { can: ['read', 'ChangeProposal'], title: 'Change proposals' },
  },
  {
    path: '/proposals/new',
    name: 'proposal-new',
    component: () => import('./views/ProposalFormView.vue'),
    meta: { can: ['create', 'ChangeProposal'], title: 'Propose a change' },
  },
  {
    path: '/proposals/:id(\\d+)',
    name: 'proposal-detail',
    component: () => import('./views/ProposalDetailView.vue'),
    props: true,
    meta: { can: ['read', 'ChangeProposal'], title: 'Change proposal' },
  },
] satisfies RouteRecordRaw[]
