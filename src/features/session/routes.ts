import type { RouteRecordRaw } from 'vue-router'

export default [
  {
    path: '/sign-in',
    name: 'sign-in',
    component: () => import('./views/SignInView.vue'),
    meta: { layout: 'auth', public: true, title: 'Sign in' },
  },
] satisfies RouteRecordRaw[]
