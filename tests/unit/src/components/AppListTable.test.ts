import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { h } from 'vue'
import { createVuetify } from 'vuetify'
import AppListTable from '@/components/AppListTable.vue'

// A list screen's table (DEVELOPERS.md#layout): the bordered card, the server-paged table in it with the attributes
// and slots given, rows at comfortable density unless told otherwise.
const vuetify = createVuetify()
const rows = [
  { id: 1, tag: 'TZA-101' },
  { id: 2, tag: 'PZA-202' },
]
const headers = [
  { title: 'Tag', key: 'tag', sortable: false },
  { title: 'No.', key: 'id', sortable: false },
]

describe('AppListTable', () => {
  it('hands attributes and slots to the table inside a bordered card', async () => {
    const clicked: number[] = []
    const w = mount(AppListTable, {
      props: { items: rows, itemsLength: 2 },
      attrs: {
        headers,
        'data-test': 'tags',
        rowProps: ({ item }: { item: { id: number } }) => ({ 'data-test': `tag-row-${item.id}` }),
        'onClick:row': (_e: unknown, { item }: { item: { id: number } }) => clicked.push(item.id),
      },
      slots: { 'item.tag': ({ item }: { item: unknown }) => h('strong', (item as { tag: string }).tag) },
      global: { plugins: [vuetify] },
    })
    const card = w.get('.v-card')
    expect(card.classes()).toEqual(expect.arrayContaining(['v-card--variant-flat', 'v-card--border']))
    const table = card.get('[data-test="tags"]')
    expect(table.classes()).toEqual(expect.arrayContaining(['v-data-table', 'v-table--density-comfortable']))
    expect(table.findAll('tbody strong').map((s) => s.text())).toEqual(['TZA-101', 'PZA-202'])
    await table.get('[data-test="tag-row-2"]').trigger('click')
    expect(clicked).toEqual([2])
  })

  it('takes another density', () => {
    const w = mount(AppListTable, {
      props: { items: rows, itemsLength: 2 },
      attrs: { headers, density: 'compact' },
      global: { plugins: [vuetify] },
    })
    expect(w.get('.v-data-table').classes()).toContain('v-table--density-compact')
  })
})
