import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { h } from 'vue'
import { createVuetify } from 'vuetify'
import AppFilterBar from '@/components/AppFilterBar.vue'

// The filter row of the list screens (DEVELOPERS.md#layout): the width its `filter` fields get, and "Clear filters".
const vuetify = createVuetify()
const field = () => h('div', { class: 'filter', 'data-test': 'field' })

describe('AppFilterBar', () => {
  it('gives the fields of class filter the least and greatest width it is told', () => {
    const w = mount(AppFilterBar, {
      props: { filtered: false, fieldWidth: [220, 320] },
      slots: { default: field },
      global: { plugins: [vuetify] },
    })
    const bar = w.get('div')
    expect(bar.classes()).toContain('filter-sized')
    expect(bar.attributes('style')).toContain('--filter-min-width: 220px')
    expect(bar.attributes('style')).toContain('--filter-max-width: 320px')
    expect(w.find('button').exists()).toBe(false)
  })

  it('leaves the widths to the screen without fieldWidth, and offers Clear filters while a filter is set', async () => {
    const w = mount(AppFilterBar, {
      props: { filtered: true, clearTest: 'clear' },
      slots: { default: field },
      global: { plugins: [vuetify] },
    })
    const bar = w.get('div')
    expect(bar.classes()).not.toContain('filter-sized')
    expect(bar.attributes('style')).toBeUndefined()
    await w.get('[data-test="clear"]').trigger('click')
    expect(w.emitted('clear')).toHaveLength(1)
  })
})
