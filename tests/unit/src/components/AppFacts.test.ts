import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { h } from 'vue'
import { createVuetify } from 'vuetify'
import AppFacts from '@/components/AppFacts.vue'

// A record page's table of facts (DEVELOPERS.md#layout): the rows given, in one table body, names dimmed by default.
const vuetify = createVuetify()
const rows = () => [
  h('tr', [h('th', 'Reason'), h('td', 'Sensor replacement')]),
  h('tr', [h('th', 'Planned'), h('td', '8 h')]),
]

describe('AppFacts', () => {
  it('puts the rows in the body of one compact table, the names dimmed', () => {
    const w = mount(AppFacts, {
      slots: { default: rows },
      attrs: { 'data-test': 'facts' },
      global: { plugins: [vuetify] },
    })
    const table = w.get('[data-test="facts"]')
    expect(table.classes()).toEqual(expect.arrayContaining(['v-table', 'v-table--density-compact', 'facts--dim']))
    expect(table.findAll('tbody > tr').map((r) => r.get('th').text())).toEqual(['Reason', 'Planned'])
    expect(table.findAll('tbody td').map((d) => d.text())).toEqual(['Sensor replacement', '8 h'])
  })

  it('leaves the names plain with plainNames', () => {
    const w = mount(AppFacts, { props: { plainNames: true }, slots: { default: rows }, global: { plugins: [vuetify] } })
    expect(w.classes()).not.toContain('facts--dim')
  })
})
