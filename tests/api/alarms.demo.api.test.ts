import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { seedDemoAlarms } from '../../server/seed/demo-alarms.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// The demo journal (seeded with the demo activity only, never in the tests' base seed) makes every figure show
// something: a flood, a chattering alarm, a stale alarm, a shelved alarm, findings.
const ctx = useTestDb({ register: true })
let app: Express
let eng: ApiAgent

beforeAll(async () => {
  await seedDemoAlarms(ctx.db, ctx.clock)
  app = createApp(ctx, { serveClient: false })
  eng = await signedIn(app, 'engineer')
})

describe('demo alarm journal', () => {
  it.each(['FHR', 'SMP'])('site %s: every figure shows something', async (code) => {
    const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
    const site = sites.find((s) => s.code === code)
    if (!site) return expect(code).toBe('SMP') // the engineer may not see the second site
    const f = (await eng.get(`/api/alarm-figures?siteId=${site.id}`).expect(200)).body
    expect(f.annunciated).toBeGreaterThan(1000)
    expect(f.floodPeriods).toBeGreaterThan(0)
    expect(f.longestFlood.top.length).toBeGreaterThan(0)
    expect(f.chattering.length).toBeGreaterThan(0)
    expect(f.stale.length).toBeGreaterThan(0)
    expect(f.standing.length).toBeGreaterThan(0)
    expect(f.states.shelved.count).toBeGreaterThan(0)
    expect(f.findings.shelvesWithoutRecord.length).toBe(1)
    expect(f.findings.unmatchedTags).toEqual([`${code}-XA-901`, `${code}-XA-902`])
    expect(f.badActors[0].limitId).not.toBeNull()
    const overdue = (await eng.get(`/api/alarm-states?overdue=true&siteId=${site.id}`).expect(200)).body
    expect(overdue.total).toBe(1)
  })
})
