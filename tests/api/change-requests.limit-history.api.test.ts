import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedInAs } from './helpers/agent.ts'
import { draftChange, buildHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// The limit page's change history: `GET /api/change-requests?limitId=` lists the requests with an item on the limit
// or on an instrument it reads, and no other (docs/change-requests.md#lists).

const ctx = useTestDb()

describe('change requests of one limit', () => {
  it('lists the requests that touch the limit or its instrument, newest first, and nothing else', async () => {
    const app = createApp(ctx)
    const { eng, approver, tech } = await signedInAs(app, { eng: 'engineer', approver: 'approver', tech: 'technician' })
    const { site, inst, limit } = await buildHeaterTrip(eng)
    const other = await buildHeaterTrip(eng)

    const baseline = { id: await activateLimit({ eng, approver, tech }, limit) }
    const raise = await draftChange(eng, {
      siteId: site.id,
      title: 'Raise the heater trip',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    })
    const transmitter = await draftChange(eng, {
      siteId: site.id,
      title: 'New transmitter head',
      items: [{ kind: 'instrument', instrumentId: inst.id, changes: { deviceDescription: 'Replaced head' } }],
    })
    const unrelated = await draftChange(eng, {
      siteId: site.id,
      title: 'Another heater',
      items: [{ kind: 'create', limitId: other.limit.id }],
    })

    const list = (await eng.get(`/api/change-requests?limitId=${limit.id}`).expect(200)).body
    const ids = list.items.map((i: { id: number }) => i.id)
    expect(ids.sort()).toEqual([baseline.id, raise.id, transmitter.id].sort())
    expect(ids).not.toContain(unrelated.id)
    expect(list.total).toBe(3)
    const rows = Object.fromEntries(list.items.map((i: { id: number; status: string }) => [i.id, i.status]))
    expect(rows).toEqual({ [baseline.id]: 'implemented', [raise.id]: 'draft', [transmitter.id]: 'draft' })

    // the filter combines with the others
    const drafts = (await eng.get(`/api/change-requests?limitId=${limit.id}&status=draft`).expect(200)).body
    expect(drafts.items.map((i: { id: number }) => i.id).sort()).toEqual([raise.id, transmitter.id].sort())
    const otherList = (await eng.get(`/api/change-requests?limitId=${other.limit.id}`).expect(200)).body
    expect(otherList.items.map((i: { id: number }) => i.id)).toEqual([unrelated.id])

    // a limit nobody changed has an empty history; a bad id is a 400
    expect((await eng.get('/api/change-requests?limitId=999999').expect(200)).body).toMatchObject({
      items: [],
      total: 0,
    })
    const bad = await eng.get('/api/change-requests?limitId=heater').expect(400)
    expect(Object.keys(bad.body.error.details.fields)).toContain('limitId')
  })
})
