import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import type { Limit, LimitPage, RegisterRow } from '../../shared/schemas/register.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// The register screen's slim rows (GET /api/limits?view=row) are built as JSON by PostgreSQL: each must say what the
// whole limit (built by the server's mapper) says for the same fields.
const ctx = useTestDb({ register: true })

let app: Express
let eng: ApiAgent
beforeAll(async () => {
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
})

function expectedRow(l: Limit): RegisterRow {
  return {
    id: l.id,
    siteId: l.siteId,
    siteCode: l.siteCode,
    areaName: l.areaName,
    processName: l.processName,
    tag: l.tag,
    description: l.description,
    limitClass: l.limitClass,
    direction: l.direction,
    setpoint: l.setpoint,
    deadband: l.deadband,
    deadbandUnit: l.deadbandUnit,
    sil: l.sil,
    priority: l.priority,
    status: l.status,
    protectionState: l.protectionState,
    testStatus: l.testStatus,
    testDueDate: l.testDueDate,
    operatingWindow: l.operatingWindow,
    primaryInstrument: l.primaryInstrument && {
      id: l.primaryInstrument.id,
      tag: l.primaryInstrument.tag,
      unit: l.primaryInstrument.unit,
      rangeLow: l.primaryInstrument.rangeLow,
      rangeHigh: l.primaryInstrument.rangeHigh,
    },
    instrumentCount: l.instrumentIds.length,
  }
}

describe('GET /api/limits?view=row', () => {
  it('answers every row of the demo register as the whole limit says, in the same order and count', async () => {
    const full = (await eng.get('/api/limits?pageSize=200&sort=tag').expect(200)).body as LimitPage
    const rows = (await eng.get('/api/limits?pageSize=200&sort=tag&view=row').expect(200))
      .body as LimitPage<RegisterRow>
    expect(full.items.length).toBeGreaterThan(150)
    expect(rows.total).toBe(full.total)
    expect(rows.totalCapped).toBe(false)
    expect(rows.items).toEqual(full.items.map(expectedRow))
    // voted sensors and window findings are in the demo register, so the comparison covers them
    expect(rows.items.some((r) => r.instrumentCount > 1)).toBe(true)
    expect(rows.items.some((r) => r.operatingWindow.warnings.length > 0)).toBe(true)
  })

  it('filters, sorts and pages like the whole view, on every sortable column both ways', async () => {
    for (const field of ['tag', 'setpoint', 'sil', 'priority', 'status', 'updatedAt', 'limitClass', 'direction']) {
      for (const sort of [field, `-${field}`]) {
        const q = `siteId=1&status=active&sort=${sort}&pageSize=25&page=2`
        const full = (await eng.get(`/api/limits?${q}`).expect(200)).body as LimitPage
        const rows = (await eng.get(`/api/limits?${q}&view=row`).expect(200)).body as LimitPage<RegisterRow>
        expect(
          rows.items.map((r) => r.id),
          sort,
        ).toEqual(full.items.map((l) => l.id))
        expect(rows.total).toBe(full.total)
      }
    }
  })

  it('pages with the keyset cursor to the same rows as page numbers', async () => {
    const first = (await eng.get('/api/limits?sort=-setpoint&pageSize=20&view=row').expect(200))
      .body as LimitPage<RegisterRow>
    expect(first.nextCursor).toBeTruthy()
    const byCursor = (
      await eng
        .get(`/api/limits?sort=-setpoint&pageSize=20&view=row&cursor=${encodeURIComponent(first.nextCursor!)}`)
        .expect(200)
    ).body as LimitPage<RegisterRow>
    const byPage = (await eng.get('/api/limits?sort=-setpoint&pageSize=20&page=2&view=row').expect(200))
      .body as LimitPage<RegisterRow>
    expect(byCursor.items.map((r) => r.id)).toEqual(byPage.items.map((r) => r.id))
  })

  it('answers 400 for an unknown view', async () => {
    const res = await eng.get('/api/limits?view=everything').expect(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })
})
