import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { type Component, h, resolveComponent } from 'vue'
import { createVuetify } from 'vuetify'
import { VAlert, VBtn, VTextarea } from 'vuetify/components'
import { vuetifyOptions } from '@/plugins/vuetify'

// The button aliases and component defaults of src/plugins/vuetify.ts: each alias draws the button it names, with
// the look every VBtn has (an alias takes only its own defaults); an alert or text area states only where it differs.

/** Renders a component, or a globally registered one (an alias) by its name. */
function render(c: Component | string, props: Record<string, unknown> = {}) {
  return mount(() => h(typeof c === 'string' ? resolveComponent(c) : c, props, () => 'Go'), {
    global: { plugins: [createVuetify(vuetifyOptions)] },
  })
}

const classes = (c: Component | string, props: Record<string, unknown>, selector: string) =>
  render(c, props).get(selector).classes()

describe('button aliases', () => {
  it.each([
    ['v-btn-primary', { color: 'primary', variant: 'flat' }],
    ['v-btn-secondary', { color: 'primary', variant: 'tonal' }],
    ['v-btn-danger', { color: 'error', variant: 'flat' }],
    ['v-btn-icon', { variant: 'text', size: 'small' }],
  ])('%s draws v-btn with %o', (alias, props) => {
    const aliased = classes(alias, {}, 'button.v-btn')
    expect(aliased.sort()).toEqual(classes(VBtn, props, 'button.v-btn').sort())
    expect(aliased).toContain('rounded-md')
    expect(aliased).toContain(`v-btn--variant-${props.variant}`)
  })

  it('an attribute of the instance overrides the alias default', () => {
    expect(classes('v-btn-primary', { variant: 'outlined' }, '.v-btn')).toContain('v-btn--variant-outlined')
  })
})

describe('defaults', () => {
  it('an alert is tonal unless it says otherwise', () => {
    expect(classes(VAlert, { type: 'info' }, '.v-alert')).toContain('v-alert--variant-tonal')
    expect(classes(VAlert, { type: 'info', variant: 'flat' }, '.v-alert')).toContain('v-alert--variant-flat')
  })

  it('a text area shows two rows and grows', () => {
    const area = render(VTextarea, {})
    expect(area.get('textarea').attributes('rows')).toBe('2')
    expect(area.get('.v-textarea').classes()).toContain('v-textarea--auto-grow')
  })
})
