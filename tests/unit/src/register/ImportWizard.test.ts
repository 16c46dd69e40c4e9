import { afterEach, describe, expect, it, vi } from 'vitest'
import { flushPromises } from '@vue/test-utils'
import type { Component } from 'vue'
import ImportWizard from '@/features/register/components/ImportWizard.vue'
import type { ImportAnswer, ImportFlowOptions } from '@/features/register/composables/useImportFlow'
import type { ImportLayout } from '@/features/register/import-mapping'
import { SITE_CHOICES, answerApi, FHR, mountView } from '../mount-view.ts'

// The import steps' buttons (docs/register.md): the way back from the columns to the file, from the check to the
// columns or to another file, the check shown again without a new upload while the columns stay as checked, and the
// commit's count of rows. The expected labels are written by hand.

type Answer = ImportAnswer & { status: string; fileName: string }
const LAYOUT: ImportLayout = {
  columns: [{ key: 'tag', header: 'Tag' }],
  required: ['tag'],
  requiredHint: 'Every import needs the limit tag.',
  fieldName: 'Field',
  splitHint: 'split it',
}
const answer = (status: string): Answer => ({
  id: 4,
  mapping: { Tag: 'tag' },
  errors: [],
  rows: [],
  summary: {},
  status,
  fileName: 'limits.csv',
})

afterEach(() => vi.unstubAllGlobals())

async function open() {
  answerApi({
    ...SITE_CHOICES,
  })
  const uploads: unknown[] = []
  const options: ImportFlowOptions<Answer, Record<string, string>> = {
    layout: LAYOUT,
    upload: async (input) => {
      uploads.push(input.mapping)
      return answer('checked')
    },
    commit: async () => answer('committed'),
    writable: () => 2,
  }
  // a generic component: its type names its slots, which mounting without them does not fill
  const w = await mountView(ImportWizard as unknown as Component, {
    user: { id: 7, roles: [{ siteId: FHR.id, role: 'safety_engineer' }] },
    props: { options, fileLabel: 'Register file', unit: ['row', 'rows'] },
  })
  const click = async (test: string) => {
    await w.find(`[data-test="${test}"]`).trigger('click')
    await flushPromises()
  }
  const at = () =>
    ['import-file-step', 'import-mapping-step', 'import-check-step', 'import-done-step'].find((s) =>
      w.find(`[data-test="${s}"]`).exists(),
    )
  const chooseFile = async () => {
    w.findComponent({ name: 'VFileInput' }).vm.$emit('update:modelValue', new File(['Tag\nTSHH-101\n'], 'limits.csv'))
    await flushPromises()
  }
  return { w, uploads, click, at, chooseFile }
}

describe('ImportWizard: the step buttons', () => {
  it('go back to the file and the columns, show the check again without a new upload, and start over', async () => {
    const { w, uploads, click, at, chooseFile } = await open()
    await chooseFile()
    await click('import-upload')
    expect(at()).toBe('import-mapping-step')
    await click('mapping-back')
    expect(at()).toBe('import-file-step')
    await click('import-upload')
    expect(w.find('[data-test="mapping-continue"]').text()).toBe('Show the check')
    await click('mapping-continue')
    expect(at()).toBe('import-check-step')
    // the columns were checked as they stand: no upload beyond the two without a mapping
    expect(uploads).toEqual([undefined, undefined])
    expect(w.find('[data-test="import-commit"]').text()).toBe('Import 2 rows')
    await click('check-columns')
    expect(at()).toBe('import-mapping-step')
    await click('mapping-continue')
    await click('check-other-file')
    expect(at()).toBe('import-file-step')
    expect(w.find('[data-test="import-upload"]').attributes('disabled')).toBeDefined()
    await chooseFile()
    await click('import-upload')
    await click('mapping-continue')
    await click('import-commit')
    expect(at()).toBe('import-done-step')
    await click('import-another')
    expect(at()).toBe('import-file-step')
  })
})
