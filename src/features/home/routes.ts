import type { RouteRecordRaw } from 'vue-router'

export default [
  { path: '/', name: 'home', component: () => import('./views/HomeView.vue'), meta: { title: 'Home' } },
] satisfies RouteRecordRaw[]
