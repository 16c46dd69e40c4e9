import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { createVuetify } from 'vuetify'
import { VAutocomplete } from 'vuetify/components'
import type { ImportMapping } from '@shared/schemas/imports.ts'
import RegisterImportMapping from '@/features/register/components/RegisterImportMapping.vue'

// The mapping step of the register import: each file header with the register field it fills.

const HEADERS = ['Area', 'Unit name', 'Sensor', 'Function tag', 'Remarks']

function mountMapping(mapping: ImportMapping, remembered: ImportMapping = {}) {
  return mount(RegisterImportMapping, {
    props: { headers: HEADERS, modelValue: mapping, remembered },
    global: { plugins: [createVuetify()] },
  })
}

describe('RegisterImportMapping', () => {
  it('emits the whole mapping with the changed column when a select changes', async () => {
    const start: ImportMapping = {
      Area: 'area',
      'Unit name': 'process',
      Sensor: 'instrumentTag',
      'Function tag': '',
      Remarks: '',
    }
    const wrapper = mountMapping(start)
    const selects = wrapper.findAllComponents(VAutocomplete)
    expect(selects).toHaveLength(HEADERS.length)

    await selects[3].setValue('tag')
    const emitted = wrapper.emitted('update:modelValue')
    expect(emitted).toHaveLength(1)
    expect(emitted![0][0]).toEqual({ ...start, 'Function tag': 'tag' })

    // Setting a column back to "ignore" sends an empty string, not null.
    await selects[0].setValue(null)
    expect(wrapper.emitted('update:modelValue')![1][0]).toEqual({ ...start, Area: '' })
  })

  it('flags a required column that no header is mapped to, and clears the flag once it is mapped', async () => {
    const wrapper = mountMapping({
      Area: 'area',
      'Unit name': 'process',
      Sensor: 'instrumentTag',
      'Function tag': '',
      Remarks: '',
    })
    const flag = wrapper.find('[data-test="mapping-missing"]')
    expect(flag.exists()).toBe(true)
    expect(flag.text()).toContain('Limit tag')
    expect(flag.text()).not.toContain('Area,')
    expect(wrapper.find('[data-test="mapping-count"]').text()).toContain('3 of 5 columns')

    await wrapper.setProps({
      modelValue: { Area: 'area', 'Unit name': 'process', Sensor: 'instrumentTag', 'Function tag': 'tag', Remarks: '' },
    })
    expect(wrapper.find('[data-test="mapping-missing"]').exists()).toBe(false)
  })

  it('marks two headers mapped to one field and says where each choice came from', () => {
    const wrapper = mountMapping(
      { Area: 'area', 'Unit name': 'process', Sensor: 'instrumentTag', 'Function tag': 'tag', Remarks: 'tag' },
      { 'Unit name': 'process' },
    )
    expect(wrapper.find('[data-test="mapping-row-4"]').text()).toContain('Limit tag is also chosen for “Function tag”')
    expect(wrapper.find('[data-test="mapping-source-0"]').text()).toBe('Same name as the register field')
    expect(wrapper.find('[data-test="mapping-source-1"]').text()).toBe('As in your last import')
    expect(wrapper.find('[data-test="mapping-source-2"]').text()).toBe('Chosen here')
  })
})
