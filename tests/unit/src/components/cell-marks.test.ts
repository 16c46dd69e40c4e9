import { mount } from '@vue/test-utils'
import { mdiAlertOctagonOutline } from '@mdi/js'
import { describe, expect, it } from 'vitest'
import { h } from 'vue'
import { AppCellChip, AppCellIcon } from '@/components/cell-marks'

// The register's light chips and icons (docs/architecture.md#first-load): what each prop does to the element drawn.
// The colour names are the theme's (Vuetify's text-* and bg-* classes); the rest is this product's own convention.
describe('AppCellIcon', () => {
  it('draws the path as an SVG, hidden from assistive technology unless it has a title', () => {
    const plain = mount(AppCellIcon, { props: { icon: mdiAlertOctagonOutline, size: 18, color: 'success' } })
    const svg = plain.get('svg')
    expect(svg.attributes()).toMatchObject({ width: '18', height: '18', 'aria-hidden': 'true' })
    expect(svg.classes()).toEqual(expect.arrayContaining(['app-cell-icon', 'text-success']))
    expect(svg.get('path').attributes('d')).toBe(mdiAlertOctagonOutline)

    const titled = mount(AppCellIcon, { props: { icon: mdiAlertOctagonOutline, title: 'No findings' } })
    expect(titled.get('svg').attributes()).toMatchObject({ role: 'img', width: '16' })
    expect(titled.get('svg').attributes('aria-hidden')).toBeUndefined()
    expect(titled.get('title').text()).toBe('No findings')
  })

  it('takes a CSS colour as a style, a theme colour as a class', () => {
    const w = mount(AppCellIcon, { props: { icon: mdiAlertOctagonOutline, color: '#b00020' } })
    expect(w.get('svg').attributes('style')).toContain('color: #b00020')
    expect(w.get('svg').classes()).toEqual(['app-cell-icon'])
  })
})

describe('AppCellChip', () => {
  it('is tonal by default, square-cornered with label, and keeps the attributes given to it', () => {
    const w = mount(AppCellChip, {
      props: { color: 'error', label: true, icon: mdiAlertOctagonOutline },
      attrs: { 'data-test': 'class-chip', class: 'font-weight-bold' },
      slots: { default: () => 'Trip' },
    })
    const chip = w.get('[data-test="class-chip"]')
    expect(chip.classes()).toEqual(
      expect.arrayContaining([
        'app-cell-chip',
        'app-cell-chip--tonal',
        'app-cell-chip--label',
        'text-error',
        'font-weight-bold',
      ]),
    )
    expect(chip.text()).toBe('Trip')
    expect(chip.find('svg.app-cell-chip__icon').exists()).toBe(true)
  })

  it('fills a flat chip with the theme colour, and outlines an outlined one', () => {
    const flat = mount(AppCellChip, { props: { color: 'primary', variant: 'flat' }, slots: { default: () => 'SIL 2' } })
    expect(flat.classes()).toEqual(expect.arrayContaining(['app-cell-chip--flat', 'bg-primary']))
    expect(flat.classes()).not.toContain('app-cell-chip--label')
    const outlined = mount(() => h(AppCellChip, { color: 'success', variant: 'outlined' }, () => 'In service'))
    expect(outlined.classes()).toEqual(expect.arrayContaining(['app-cell-chip--outlined', 'text-success']))
    expect(outlined.find('svg').exists()).toBe(false)
  })
})
