import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { createVuetify } from 'vuetify'
import { mdiFileDelimitedOutline, mdiFilePdfBox } from '@mdi/js'
import AppExportButton from '@/components/AppExportButton.vue'

// The download button of a list screen (DEVELOPERS.md#layout): the format names its icon, label and data-test.
const vuetify = createVuetify()

describe('AppExportButton', () => {
  it('links to the download with the icon, label and data-test of its format', () => {
    const w = mount(AppExportButton, {
      props: { format: 'pdf', href: '/api/bypasses/review.pdf' },
      global: { plugins: [vuetify] },
    })
    const a = w.get('a[data-test="export-pdf"]')
    expect(a.attributes('href')).toBe('/api/bypasses/review.pdf')
    expect(a.text()).toBe('PDF')
    expect(a.classes()).toContain('v-btn--variant-outlined')
    expect(a.html()).toContain(mdiFilePdfBox)
  })

  it('takes another label, data-test and variant, and hands other attributes to the button', () => {
    const w = mount(AppExportButton, {
      props: { format: 'csv', href: '/api/audit.csv', test: 'audit-export-csv', variant: 'tonal' },
      attrs: { disabled: true },
      slots: { default: () => 'Export CSV' },
      global: { plugins: [vuetify] },
    })
    const b = w.get('[data-test="audit-export-csv"]')
    expect(b.text()).toBe('Export CSV')
    expect(b.classes()).toContain('v-btn--variant-tonal')
    expect(b.classes()).toContain('v-btn--disabled')
    expect(b.html()).toContain(mdiFileDelimitedOutline)
  })
})
