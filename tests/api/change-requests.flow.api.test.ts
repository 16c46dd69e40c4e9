import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { signedInAs } from './helpers/agent.ts'
import { draftChange, buildHeaterTrip, readyToImplement } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = 'limitkeeper-demo'

describe('change request: propose, approve, implement, close', () => {
  it('activates a proposed limit and then changes its setpoint through a second request', async () => {
    const app = createApp(ctx)
    const { eng, approver, tech } = await signedInAs(app, { eng: 'engineer', approver: 'approver', tech: 'technician' })
    const { site, limit } = await buildHeaterTrip(eng)

    // 1. baseline: put the proposed limit in service
    const cr1 = await draftChange(eng, {
      siteId: site.id,
      title: 'New heater trip',
      rationale: 'hazard study action 12',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    await readyToImplement(eng, cr1.id)
    await eng.post(`/api/change-requests/${cr1.id}/submission`).expect(200)
    await approver.post(`/api/change-requests/${cr1.id}/approvals`, { password: PW }).expect(200)
    const implemented = (
      await tech
        .post(`/api/change-requests/${cr1.id}/implementations`, {
          itemId: cr1.items[0].id,
          readBack: { setpoint: 780, deadband: 5, deadbandUnit: 'eu', onDelaySec: 0, offDelaySec: 0, latching: true },
          password: PW,
        })
        .expect(200)
    ).body
    expect(implemented.status).toBe('implemented')
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('active')

    // 2. an active limit is read-only in the register
    await eng.patch(`/api/limits/${limit.id}`, { setpoint: 790 }).expect(409)

    // 3. change the setpoint: wrong read-back refused, right one applied
    const cr2 = await draftChange(eng, {
      siteId: site.id,
      title: 'Raise trip',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    })
    expect(cr2.items[0].changes.setpoint).toEqual({ from: 780, to: 790 })
    await readyToImplement(eng, cr2.id)
    await eng.post(`/api/change-requests/${cr2.id}/submission`).expect(200)
    const self = await eng.post(`/api/change-requests/${cr2.id}/approvals`, { password: PW }).expect(403)
    expect(self.body.error.code).toBe('FORBIDDEN')
    await approver.post(`/api/change-requests/${cr2.id}/approvals`, { password: PW }).expect(200)
    const wrong = await tech
      .post(`/api/change-requests/${cr2.id}/implementations`, {
        itemId: cr2.items[0].id,
        readBack: { setpoint: 789.5 },
        password: PW,
      })
      .expect(422)
    expect(wrong.body.error.details.fields['readBack.setpoint'][0]).toContain('790')
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(780)
    const ok = await tech.post(`/api/change-requests/${cr2.id}/implementations`, {
      itemId: cr2.items[0].id,
      readBack: { setpoint: 790 },
      password: PW,
    })
    expect(ok.body.error).toBeUndefined()
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(790)

    // 4. close after the PSSR with the checklist complete
    const early = await eng
      .post(`/api/change-requests/${cr2.id}/closure`, {
        password: PW,
        pssr: { reference: 'PSSR-2026-114', findings: 'none', readyForService: true },
      })
      .expect(400)
    expect(early.body.error.details.fields.checklist.length).toBe(
      IMPACT_CHECKLIST.filter((c) => c.group === 'closeout').length,
    )
    for (const c of IMPACT_CHECKLIST)
      await eng.put(`/api/change-requests/${cr2.id}/checklist/${c.item}`, { done: true }).expect(200)
    const closed = (
      await eng
        .post(`/api/change-requests/${cr2.id}/closure`, {
          password: PW,
          pssr: { reference: 'PSSR-2026-114', findings: 'none', readyForService: true },
        })
        .expect(200)
    ).body
    expect(closed.status).toBe('closed')
    expect(closed.signatures.map((s: { meaning: string }) => s.meaning)).toEqual(['approved', 'implemented', 'closed'])
    expect(closed.signatures.every((s: { matchesContent: boolean }) => s.matchesContent)).toBe(true)

    const revisions = (await eng.get(`/api/limits/${limit.id}/revisions`).expect(200)).body.items
    expect(revisions[0].changeRequestId).toBe(cr2.id)
    expect(revisions[0].changes).toContainEqual({ field: 'setpoint', from: 780, to: 790 })

    const pdf = await eng.get(`/api/change-requests/${cr2.id}/pdf`).expect(200)
    expect(pdf.headers['content-type']).toBe('application/pdf')
    expect(pdf.body.subarray(0, 5).toString()).toBe('%PDF-')
  })
})
