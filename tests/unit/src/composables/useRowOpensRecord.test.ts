import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { defineComponent, h } from 'vue'
import { createMemoryHistory, createRouter } from 'vue-router'
import { createVuetify } from 'vuetify'
import AppListTable from '@/components/AppListTable.vue'
import { useRowOpensRecord } from '@/composables/useRowOpensRecord'

// A list table's row click opens the row's record page: the named route with the row's id.
const Page = defineComponent({ render: () => h('div') })
const ListPage = defineComponent({
  setup() {
    const open = useRowOpensRecord('thing-detail')
    return () =>
      h(AppListTable, {
        items: [
          { id: 4, tag: 'TZA-101' },
          { id: 7, tag: 'PZA-202' },
        ],
        itemsLength: 2,
        headers: [{ title: 'Tag', key: 'tag', sortable: false }],
        rowProps: ({ item }: { item: { id: number } }) => ({ 'data-test': `row-${item.id}` }),
        'onClick:row': open,
      })
  },
})

describe('useRowOpensRecord', () => {
  it('opens the clicked row’s record', async () => {
    const router = createRouter({
      history: createMemoryHistory(),
      routes: [
        { path: '/things', component: ListPage },
        { path: '/things/:id(\\d+)', name: 'thing-detail', component: Page },
      ],
    })
    await router.push('/things')
    const w = mount(ListPage, { global: { plugins: [createVuetify(), router] } })
    const navigated = new Promise<string>((resolve) => router.afterEach((to) => resolve(to.fullPath)))
    await w.get('[data-test="row-7"]').trigger('click')
    expect(await navigated).toBe('/things/7')
    expect(router.currentRoute.value.params).toEqual({ id: '7' })
  })
})
