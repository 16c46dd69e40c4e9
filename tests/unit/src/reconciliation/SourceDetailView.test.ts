import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { ReadNowResult, Run, Source } from '@shared/schemas/reconciliation.ts'
import type { Role } from '@shared/schemas/users.ts'
import SourceDetailView from '@/features/reconciliation/views/SourceDetailView.vue'
import { SITE_CHOICES, mountRecordPage, answerApi, at, FHR, NOW, type Routes } from '../mount-view.ts'

// A source's page (docs/reconciliation.md#screens): for a live device, "Read now" and "Run now"; for an export, the
// upload and the remembered column mapping. Safety engineers of the site keep the sources, run them and upload
// exports; everyone else reads. Nothing on the page writes to a device (docs/reconciliation.md#never-a-write): both
// device actions only ask the server to read it. The clock is fixed at 12:00 UTC.

function run(o: Partial<Run> = {}): Run {
  return {
    id: 77,
    sourceId: 9,
    sourceName: 'Heater H-101 controller',
    siteId: FHR.id,
    trigger: 'manual',
    outcome: 'completed',
    startedAt: at(-1),
    finishedAt: at(-1),
    runBy: 'Rowan Pike',
    fileName: null,
    rowsRead: 0,
    rowsIgnored: 0,
    limitsCompared: 4,
    attributesCompared: 12,
    differences: 1,
    findingsNew: 0,
    findingsReopened: 0,
    findingsResolved: 0,
    error: null,
    ...o,
  }
}

function source(kind: Source['kind'], o: Partial<Source> = {}): Source {
  const device = kind === 'modbus'
  return {
    id: 9,
    siteId: FHR.id,
    name: device ? 'Heater H-101 controller' : 'Crude unit safety system export',
    kind,
    description: '',
    host: device ? '10.20.0.15' : null,
    port: device ? 502 : null,
    unitId: device ? 3 : null,
    timeoutMs: 2000,
    registerMap: device
      ? [
          {
            tag: 'TSHH-103',
            attribute: 'setpoint',
            functionCode: 3,
            address: 100,
            dataType: 'int16',
            wordOrder: 'high_first',
            scale: '0.1',
            unit: '°C',
            bit: null,
            tolerance: null,
          },
        ]
      : [],
    columnMapping: device ? {} : { 'Point name': 'tag', Parameter: 'attribute', Setting: 'value' },
    areaIds: [],
    tolerances: {},
    scheduleHours: null,
    effectiveScheduleHours: device ? 1 : null,
    active: true,
    nextRunAt: device ? at(1) : null,
    version: 2,
    lastRun: run(),
    openFindings: 1,
    ...o,
  }
}

function api(s: Source, more: Routes = {}) {
  return answerApi({
    [`GET /reconciliation-sources/${s.id}`]: () => ({ body: s }),
    'GET /reconciliation-runs': () => ({ body: { items: [run()], total: 1 } }),
    ...SITE_CHOICES,
    ...more,
  })
}

async function open(s: Source, roles: Role[]) {
  return mountRecordPage(SourceDetailView, s.id, { id: 7, roles })
}

type Wrapper = Awaited<ReturnType<typeof open>>
const BUTTONS = ['source-read-now', 'source-run-now', 'export-upload-button', 'mapping-save'] as const
/** Each button shown: enabled or disabled. */
function buttons(w: Wrapper) {
  const out: Record<string, 'enabled' | 'disabled'> = {}
  for (const name of BUTTONS) {
    const btn = w.find(`[data-test="${name}"]`)
    if (btn.exists()) out[name] = btn.attributes('disabled') === undefined ? 'enabled' : 'disabled'
  }
  return out
}
const mappingDisabled = (w: Wrapper) =>
  ['Point name', 'Parameter', 'Setting'].map((h) => w.find(`[data-test="mapping-${h}"]`).classes('v-input--disabled'))

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

describe('SourceDetailView: buttons for the roles and kinds of source', () => {
  it.each<[string, Source['kind'], Role[], Record<string, 'enabled' | 'disabled'>, string]>([
    [
      'a safety engineer reads and runs a live device',
      'modbus',
      ['safety_engineer'],
      { 'source-read-now': 'enabled', 'source-run-now': 'enabled' },
      'Press “Read now” to read the device.',
    ],
    ['an operator reads the page only', 'modbus', ['operator'], {}, 'Safety engineers of the site read devices.'],
    [
      'the plant manager reads the page only',
      'modbus',
      ['plant_manager'],
      {},
      'Safety engineers of the site read devices.',
    ],
    ['an auditor reads the page only', 'modbus', ['auditor'], {}, 'Safety engineers of the site read devices.'],
    [
      'a safety engineer uploads an export once a file is chosen',
      'export',
      ['safety_engineer'],
      { 'export-upload-button': 'disabled' },
      'Upload an export',
    ],
    ['an operator does not upload', 'export', ['operator'], {}, 'Safety engineers of the site upload exports.'],
    [
      'the plant manager does not upload',
      'export',
      ['plant_manager'],
      {},
      'Safety engineers of the site upload exports.',
    ],
  ])('%s (%s, %j)', async (_what, kind, roles, expected, says) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const s = source(kind)
    api(s)
    const w = await open(s, roles)
    expect(w.find('[data-test="source-name"]').text()).toBe(s.name)
    expect(buttons(w)).toEqual(expected)
    expect(w.text()).toContain(says)
  })

  it('a live device is shown as read only, with its address and register map', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const s = source('modbus')
    api(s)
    const w = await open(s, ['safety_engineer'])
    expect(w.text()).toContain('Live device over Modbus TCP, read only')
    expect(w.find('[data-test="source-address"]').text()).toBe('10.20.0.15:502, unit 3')
    expect(w.find('[data-test="register-map"]').text()).toContain('TSHH-103')
    expect(w.find('[data-test="export-upload"]').exists()).toBe(false)
    // the page's buttons are the two reads; none writes a value to the device
    expect(
      w
        .findAll('button')
        .map((b) => b.text())
        .filter(Boolean),
    ).toEqual(['Read now', 'Run now'])
  })

  it('the column mapping of an export is editable by a safety engineer only', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const s = source('export')
    api(s)
    expect(mappingDisabled(await open(s, ['safety_engineer']))).toEqual([false, false, false])
    vi.unstubAllGlobals()
    api(s)
    expect(mappingDisabled(await open(s, ['operator']))).toEqual([true, true, true])
  })
})

describe('SourceDetailView: the device actions only read', () => {
  it('"Read now" asks the server to read the device and shows the decoded values; nothing else is sent', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const s = source('modbus')
    const reading: ReadNowResult = {
      reachable: true,
      error: null,
      readAt: at(0),
      values: [
        {
          tag: 'TSHH-103',
          attribute: 'setpoint',
          functionCode: 3,
          address: 100,
          raw: [9100],
          value: '910',
          unit: '°C',
          error: null,
        },
      ],
    }
    const calls = api(s, { 'POST /reconciliation-sources/9/reads': () => ({ body: reading }) })
    const w = await open(s, ['safety_engineer'])
    await w.find('[data-test="source-read-now"]').trigger('click')
    await flushPromises()
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([
      { method: 'POST', path: '/reconciliation-sources/9/reads', body: {} },
    ])
    expect(w.find('[data-test="read-TSHH-103-setpoint"]').text()).toBe('910 °C')
    expect(w.find('[data-test="read-values"]').text()).toContain('FC3 @100: 9100')
  })

  it('"Run now" starts a run of the source and sends nothing but the request', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const s = source('modbus')
    const calls = api(s, { 'POST /reconciliation-sources/9/runs': () => ({ body: run({ id: 78 }) }) })
    const w = await open(s, ['safety_engineer'])
    await w.find('[data-test="source-run-now"]').trigger('click')
    await flushPromises()
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([
      { method: 'POST', path: '/reconciliation-sources/9/runs', body: {} },
    ])
  })
})
