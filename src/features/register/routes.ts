import type { RouteRecordRaw } from 'vue-router'
import { prefetchProcesses, prefetchRegisterRows } from './api'
import { registerListQuery, registerProcessQuery } from './composables/useRegisterQuery'

export default [
  {
    path: '/register',
    name: 'register',
    component: () => import('./views/RegisterView.vue'),
    meta: {
      can: ['read', 'Limit'],
      title: 'Register',
      // the page of rows and the choices of the process filter, as the screen will ask for them
      prefetch: (to) => {
        const query = registerListQuery(to.query)
        return Promise.all([prefetchRegisterRows(query), prefetchProcesses(registerProcessQuery(query))])
      },
    },
  },
  {
    path: '/register/import',
    name: 'register-import',
    component: () => import('./views/RegisterImportView.vue'),
    meta: { can: ['import', 'Limit'], title: 'Import register' },
  },
  {
    path: '/register/limits/new',
    name: 'limit-new',
    component: () => import('./views/LimitFormView.vue'),
    meta: { can: ['create', 'Limit'], title: 'New limit' },
  },
  {
    path: '/register/limits/:id(\\d+)',
    name: 'limit-detail',
    component: () => import('./views/LimitDetailView.vue'),
    props: true,
    meta: { can: ['read', 'Limit'], title: 'Limit' },
  },
  {
    path: '/register/limits/:id(\\d+)/edit',
    name: 'limit-edit',
    component: () => import('./views/LimitFormView.vue'),
    props: true,
    meta: { can: ['update', 'Limit'], title: 'Edit limit' },
  },
  {
    path: '/register/instruments',
    name: 'instrument-list',
    component: () => import('./views/InstrumentListView.vue'),
    meta: { can: ['read', 'Instrument'], title: 'Instruments' },
  },
  {
    path: '/register/instruments/new',
    name: 'instrument-new',
    component: () => import('./views/InstrumentFormView.vue'),
    meta: { can: ['create', 'Instrument'], title: 'New instrument' },
  },
  {
    path: '/register/instruments/:id(\\d+)/edit',
    name: 'instrument-edit',
    component: () => import('./views/InstrumentFormView.vue'),
    props: true,
    meta: { can: ['update', 'Instrument'], title: 'Edit instrument' },
  },
  {
    path: '/register/processes',
    name: 'process-list',
    component: () => import('./views/ProcessListView.vue'),
    meta: { can: ['read', 'Process'], title: 'Processes' },
  },
] satisfies RouteRecordRaw[]
