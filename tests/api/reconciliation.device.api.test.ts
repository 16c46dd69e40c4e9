import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ModbusSim, startModbusSim } from '../../server/dev/modbus-sim.ts'
import { createReconciliationJob } from '../../server/features/reconciliation/reconciliation.jobs.ts'
import { createDb } from '../../server/db/index.ts'
import { seedDemoReconciliation } from '../../server/seed/demo-reconciliation.ts'
import { signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// The demo plant's register and devices: the simulated device holds the two deliberate differences
// (TSHH-103 setpoint 910 °C against 900 °C in the register; the bypass flag of TSHH-220 with no bypass on record).
const ctx = useTestDb({ register: true })
let sim: ModbusSim

beforeAll(async () => {
  sim = await startModbusSim(0, { quiet: true })
  const owner = createDb(ctx.database.ownerUrl, 2).db
  await seedDemoReconciliation(owner, ctx.clock, { port: sim.port })
  await owner.destroy()
})
afterAll(async () => {
  await sim?.close()
})

describe('reconciliation of the demo devices', () => {
  it('the first scheduled run shows both deliberate differences as findings, and nothing else differs', async () => {
    const job = createReconciliationJob(ctx.db, ctx.config, ctx.clock)
    const result = await job.runDue(ctx.clock.now())
    expect(result).toEqual({ runs: 3, unreachable: 0, failed: 0 })
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const list = (await eng.get('/api/findings?state=open').expect(200)).body
    const brief = list.items.map((f: { kind: string; tag: string; attribute: string }) => [f.kind, f.tag, f.attribute])
    expect(brief.sort()).toEqual([
      ['bypassed_without_authorization', 'TSHH-220', 'bypassed'],
      ['changed_without_moc', 'TSHH-103', 'setpoint'],
    ])
    const setpoint = list.items.find((f: { tag: string }) => f.tag === 'TSHH-103')
    expect(setpoint).toMatchObject({ registerValue: '900', deviceValue: '910', unit: '°C' })
    // the limit page: last reconciliation per source
    const recs = (await eng.get(`/api/limits/${setpoint.limitId}/reconciliations`).expect(200)).body.items
    expect(recs).toHaveLength(1)
    expect(recs[0]).toMatchObject({ sourceName: 'H-101 bridgewall limiter', matched: false })
    // a second run the same hour does nothing (next run an hour later by the site policy)
    expect(await job.runDue(ctx.clock.now())).toEqual({ runs: 0, unreachable: 0, failed: 0 })
    // one digest mail per run with new findings, to safety engineers and shift supervisors of the site
    const mails = await ctx.db
      .selectFrom('mail_outbox')
      .select(['to_addr', 'subject'])
      .where('topic', '=', 'reconciliation')
      .execute()
    expect(mails.map((m) => m.to_addr).sort()).toEqual(
      [
        'engineer@fernhollow.example',
        'engineer@fernhollow.example',
        'supervisor@fernhollow.example',
        'supervisor@fernhollow.example',
      ].sort(),
    )
  })

  it('only read function codes ever reached the simulated device', () => {
    expect(sim.requests.length).toBeGreaterThan(0)
    expect(new Set(sim.requests.map((r) => r.functionCode))).toEqual(new Set([3, 4]))
    expect(sim.writeAttempts).toEqual([])
  })

  it('a device corrected on the panel resolves its finding at the next run; the same difference again reopens it', async () => {
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const sources = (await eng.get('/api/reconciliation-sources').expect(200)).body.items
    const h101 = sources.find((s: { name: string }) => s.name === 'H-101 bridgewall limiter')
    const f0 = (await eng.get(`/api/findings?sourceId=${h101.id}`).expect(200)).body.items[0]
    const acked = (await eng.post(`/api/findings/${f0.id}/acknowledgement`, { version: f0.version }).expect(200)).body
    expect(acked.state).toBe('acknowledged')
    sim.setValue(1, 'TSHH-103', 'setpoint', '900')
    const run = await eng.created(`/api/reconciliation-sources/${h101.id}/runs`, {})
    expect(run).toMatchObject({ outcome: 'completed', findingsResolved: 1, findingsNew: 0 })
    const resolved = (await eng.get(`/api/findings/${f0.id}`).expect(200)).body
    expect(resolved).toMatchObject({ state: 'resolved', resolution: 'device_corrected' })
    sim.setValue(1, 'TSHH-103', 'setpoint', '910')
    const again = await eng.created(`/api/reconciliation-sources/${h101.id}/runs`, {})
    expect(again.findingsReopened).toBe(1)
    expect((await eng.get(`/api/findings/${f0.id}`).expect(200)).body).toMatchObject({ state: 'open', reopenCount: 1 })
  })

  it('read now shows the decoded values of the map', async () => {
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const sources = (await eng.get('/api/reconciliation-sources').expect(200)).body.items
    const smp = sources.find((s: { name: string }) => s.name === 'Thermal-oil heater limiter')
    const read = (await eng.post(`/api/reconciliation-sources/${smp.id}/reads`).expect(200)).body
    expect(read.reachable).toBe(true)
    const sp = read.values.find(
      (v: { tag: string; attribute: string }) => v.tag === 'TSHH-701' && v.attribute === 'setpoint',
    )
    // int32 60440 hundredths of °F = 604.4 °F (318 °C × 1.8 + 32)
    expect(sp).toMatchObject({ value: '604.4', unit: '°F', raw: [0, 60440] })
    const op = await signedIn(app, 'operator')
    await op.post(`/api/reconciliation-sources/${smp.id}/reads`).expect(404)
  })

  it('a silent device is an unreachable finding within its timeout, and the other sources still run', async () => {
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const sources = (await eng.get('/api/reconciliation-sources').expect(200)).body.items
    const h220 = sources.find((s: { name: string }) => s.name === 'H-220 outlet limiter')
    await eng.patch(`/api/reconciliation-sources/${h220.id}`, { version: h220.version, timeoutMs: 300 }).expect(200)
    const dead = await startModbusSim(0, { quiet: true, devices: [] })
    dead.setSilent(true)
    const h101 = sources.find((s: { name: string }) => s.name === 'H-101 bridgewall limiter')
    const cur = (await eng.get(`/api/reconciliation-sources/${h220.id}`).expect(200)).body
    await eng.patch(`/api/reconciliation-sources/${h220.id}`, { version: cur.version, port: dead.port }).expect(200)
    // both due now: one silent, one answering
    await ctx.db
      .updateTable('reconciliation_source')
      .set({ next_run_at: ctx.clock.now() })
      .where('id', 'in', [h220.id, h101.id])
      .execute()
    const t0 = Date.now()
    const res = await createReconciliationJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
    const took = Date.now() - t0
    await dead.close()
    expect(res).toEqual({ runs: 2, unreachable: 1, failed: 0 })
    // connect + one unanswered read, each bounded by the 300 ms timeout, plus the database work
    expect(took).toBeLessThan(10_000)
    const un = (await eng.get(`/api/findings?kind=unreachable&sourceId=${h220.id}`).expect(200)).body.items
    expect(un).toHaveLength(1)
    expect(un[0].detail).toMatch(/did not answer|Timed out/)
    // the bypass finding of that source is left as it was (nothing compared)
    const others = (await eng.get(`/api/findings?sourceId=${h220.id}&kind=bypassed_without_authorization`).expect(200))
      .body
    expect(others.items[0].state).toBe('open')
  })
})
