import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { verifyAuditChain } from '../../server/features/audit/audit.repository.ts'
import { compareToTarget, sifPfd, type Sil } from '../../shared/domain/sif-reliability.ts'
import type { Instrument, Limit } from '../../shared/schemas/register.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb({ register: true })

/** Every page of a list endpoint (pages of 200). */
async function all<T>(agent: ApiAgent, url: string): Promise<T[]> {
  const items: T[] = []
  for (let page = 1; ; page++) {
    const res = await agent.get(`${url}${url.includes('?') ? '&' : '?'}pageSize=200&page=${page}`).expect(200)
    items.push(...res.body.items)
    if (res.body.items.length < 200) return items
  }
}

describe('demo plant register', () => {
  it('holds about 150 limits over both sites with the mix the demo promises, every row inside its operating window', async () => {
    const eng = await signedIn(createApp(ctx), 'engineer')
    const limits = await all<Limit>(eng, '/api/limits')
    const instruments = await all<Instrument>(eng, '/api/instruments')

    expect(limits.length).toBeGreaterThanOrEqual(140)
    const perSite = new Map<string, number>()
    for (const l of limits) perSite.set(l.siteCode, (perSite.get(l.siteCode) ?? 0) + 1)
    expect(perSite.get('FHR')).toBeGreaterThanOrEqual(40)
    expect(perSite.get('SMP')).toBeGreaterThanOrEqual(40)

    // tags are unique per site, ignoring case
    const keys = limits.map((l) => `${l.siteId}:${l.tag.toLowerCase()}`)
    expect(new Set(keys).size).toBe(limits.length)

    // every class and direction, and each combination
    for (const limitClass of ['alarm', 'trip']) {
      for (const direction of ['high', 'low']) {
        expect(
          limits.some((l) => l.limitClass === limitClass && l.direction === direction),
          `${direction} ${limitClass}`,
        ).toBe(true)
      }
    }

    // every signal kind, the thermocouple types for high temperatures, RTD wiring, square-root flow, switches
    const used = new Set(limits.flatMap((l) => l.instrumentIds))
    const behind = instruments.filter((i) => used.has(i.id))
    expect(new Set(behind.map((i) => i.signal.kind))).toEqual(
      new Set(['thermocouple', 'rtd', 'current', 'voltage', 'switch']),
    )
    const variables = new Set(behind.map((i) => i.measuredVariable))
    for (const v of ['temperature', 'pressure', 'level', 'flow'] as const) expect(variables.has(v), v).toBe(true)
    const tcTypes = new Set(behind.flatMap((i) => (i.signal.kind === 'thermocouple' ? [i.signal.tcType] : [])))
    for (const t of ['K', 'N'] as const) expect(tcTypes.has(t), t).toBe(true)
    expect(tcTypes.has('S') || tcTypes.has('R')).toBe(true)
    const rtdWires = new Set(behind.flatMap((i) => (i.signal.kind === 'rtd' ? [i.signal.wires] : [])))
    expect(rtdWires.has(3) && rtdWires.has(4)).toBe(true)
    expect(
      behind.some((i) => i.signal.kind === 'current' && i.signal.sqrtExtraction && i.measuredVariable === 'flow'),
    ).toBe(true)
    expect(
      behind.some((i) => i.signal.kind === 'switch' && i.deviceKind === 'switch' && i.measuredVariable === 'flow'),
    ).toBe(true)
    expect(new Set(behind.filter((i) => i.measuredVariable === 'pressure').map((i) => i.pressureReference))).toEqual(
      new Set(['gauge', 'absolute', 'differential']),
    )
    expect(behind.some((i) => i.burnout === 'upscale') && behind.some((i) => i.burnout === 'downscale')).toBe(true)

    // voted functions: 1oo2 and 2oo3 sensors
    expect(limits.some((l) => l.instrumentIds.length === 2)).toBe(true)
    expect(limits.some((l) => l.instrumentIds.length === 3)).toBe(true)

    // SIL-rated functions carry sensor, logic and final element, and their PFDavg meets the target
    const sif = limits.filter((l) => l.sil !== null)
    expect(sif.length).toBeGreaterThanOrEqual(5)
    expect(sif.filter((l) => l.sil === 3)).toHaveLength(1)
    for (const l of sif) {
      expect(l.subsystems.map((s) => s.role).sort(), l.tag).toEqual(['final_element', 'logic', 'sensor'])
      const comparison = compareToTarget(l.sil as Sil, sifPfd(l.subsystems))
      expect(comparison.meetsTarget, `${l.tag}: ${comparison.explanation}`).toBe(true)
    }

    // trips carry an analytical limit, a process safety time and compensating measures; some a code-set interval
    const trips = limits.filter((l) => l.limitClass === 'trip')
    for (const t of trips) {
      expect(t.analyticalLimit, t.tag).not.toBeNull()
      expect(t.processSafetyTimeSec, t.tag).not.toBeNull()
      expect(t.compensatingMeasures.length, t.tag).toBeGreaterThan(0)
    }
    expect(trips.some((t) => t.codeSetInterval)).toBe(true)
    expect(trips.some((t) => t.latching && t.resetRole === 'shift_supervisor')).toBe(true)
    const intervals = new Set(limits.map((l) => l.testIntervalMonths))
    for (const months of [6, 12, 24]) expect(intervals.has(months), `${months} months`).toBe(true)

    // no blocking window finding anywhere; a few rows raise warnings on purpose
    expect(limits.filter((l) => l.operatingWindow.errors.length).map((l) => l.tag)).toEqual([])
    const warned = limits.filter((l) => l.operatingWindow.warnings.length)
    expect(warned.length).toBeGreaterThanOrEqual(3)
    expect(new Set(warned.flatMap((l) => l.operatingWindow.warnings.map((w) => w.code)))).toEqual(
      new Set(['SETPOINT_NEAR_RANGE_END', 'DELAY_ON_TRIP', 'BURNOUT_AWAY_FROM_TRIP', 'DESIGN_LIMIT_OUTSIDE_RANGE']),
    )
    const filtered = await all<Limit>(eng, '/api/limits?hasWarnings=true')
    expect(filtered.map((l) => l.id).sort()).toEqual(warned.map((l) => l.id).sort())
    expect((await eng.get('/api/limits?hasErrors=true').expect(200)).body.total).toBe(0)

    // mostly active, about ten drafts, two retired
    const byStatus = (s: string) => limits.filter((l) => l.status === s).length
    expect(byStatus('retired')).toBe(2)
    expect(byStatus('proposed')).toBeGreaterThanOrEqual(8)
    expect(byStatus('proposed')).toBeLessThanOrEqual(12)
    expect(byStatus('active')).toBe(limits.length - byStatus('retired') - byStatus('proposed'))
  })

  it('records the approved baseline as a revision and keeps the audit chain intact', async () => {
    const eng = await signedIn(createApp(ctx), 'engineer')
    const active = (await eng.get('/api/limits?q=tshh-101&status=active').expect(200)).body.items as Limit[]
    expect(active.map((l) => l.tag)).toEqual(['TSHH-101'])
    expect(active[0].revision).toBe(2)
    const revisions = (await eng.get(`/api/limits/${active[0].id}/revisions`).expect(200)).body
    expect(revisions.items.map((r: { reason: string }) => r.reason)).toEqual([
      'demo baseline approved',
      'created as a draft',
    ])
    expect(revisions.items[0].changes).toEqual([{ field: 'status', from: 'proposed', to: 'active' }])

    const retired = (await eng.get('/api/limits?status=retired').expect(200)).body.items as Limit[]
    for (const l of retired) {
      const reasons = (await eng.get(`/api/limits/${l.id}/revisions`).expect(200)).body.items.map(
        (r: { reason: string }) => r.reason,
      )
      expect(reasons).toHaveLength(3)
      expect(reasons.slice(1)).toEqual(['demo baseline approved', 'created as a draft'])
    }
    expect((await verifyAuditChain(ctx.db)).ok).toBe(true)
  })
})
