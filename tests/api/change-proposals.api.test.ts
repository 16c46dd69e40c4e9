import { describe, expect, it } from 'vitest'
import { useSignedIn } from './helpers/agent.ts'
import { auditActions, buildActiveHeaterTrip, carryOutChange, draftChange } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Change proposals (docs/change-requests.md#change-proposals): operators, technicians and shift supervisors raise
// what should change and why; a safety engineer takes a proposal up into a change request or declines it with a
// reason. OSHA 1910.119(l) asks for procedures to manage change, and (h)/(c) for employee participation (from memory);
// who raises and who develops is common practice.
const ctx = useTestDb()
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor', 'operator', 'auditor'] as const
const { as } = useSignedIn(ctx, PEOPLE)

describe('change proposals', () => {
  it('are raised by operators, technicians and shift supervisors, not by approvers or auditors', async () => {
    const { site, limit } = await buildActiveHeaterTrip({
      eng: as.engineer,
      approvers: [as.approver],
      tech: as.technician,
    })
    const body = {
      siteId: site.id,
      limitId: limit.id,
      title: 'Raise the trip by 10 °C',
      reason: 'Spurious trips at start-up',
    }
    for (const who of ['operator', 'technician', 'supervisor'] as const) {
      const p = await as[who].created('/api/change-proposals', body)
      expect(p).toMatchObject({ status: 'open', limitId: limit.id, limitTag: limit.tag, title: body.title })
    }
    for (const who of ['approver', 'auditor', 'engineer'] as const)
      await as[who].post('/api/change-proposals', body).expect(403)
    // what and why are required; the limit is optional but must be of the site
    const bad = (await as.operator.post('/api/change-proposals', { ...body, title: ' ', reason: '' }).expect(400)).body
    expect(Object.keys(bad.error.details.fields).sort()).toEqual(['reason', 'title'])
    await as.operator.post('/api/change-proposals', { ...body, limitId: null }).expect(201)
    const other = (await as.engineer.get('/api/sites').expect(200)).body.items.find(
      (s: { id: number }) => s.id !== site.id,
    )
    await as.operator.post('/api/change-proposals', { ...body, siteId: other.id }).expect(403)

    // the list: paged, filtered by status and limit; everyone at the site reads it
    const list = (await as.auditor.get(`/api/change-proposals?limitId=${limit.id}&pageSize=2`).expect(200)).body
    expect(list.total).toBe(3)
    expect(list.items).toHaveLength(2)
    const page2 = (await as.auditor.get(`/api/change-proposals?limitId=${limit.id}&pageSize=2&page=2`).expect(200)).body
    expect(page2.items).toHaveLength(1)
    const mine = (await as.operator.get(`/api/change-proposals?mine=true&siteId=${site.id}`).expect(200)).body
    expect(mine.items.every((p: { proposerName: string }) => p.proposerName === mine.items[0].proposerName)).toBe(true)
    await as.auditor.get('/api/change-proposals?status=nonsense').expect(400)
  })

  it('are not raised about a retired limit (docs/register.md#the-rule-book)', async () => {
    const crew = { eng: as.engineer, approvers: [as.approver], tech: as.technician }
    const { site, limit } = await buildActiveHeaterTrip(crew)
    await carryOutChange(crew, {
      siteId: site.id,
      title: `Retire ${limit.tag}`,
      items: [{ kind: 'retire', limitId: limit.id }],
    })
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('retired')
    const body = { siteId: site.id, limitId: limit.id, title: 'Lower the trip', reason: 'Drift seen at the last test' }
    const refused = (await as.operator.post('/api/change-proposals', body).expect(409)).body
    expect(refused.error).toMatchObject({ code: 'INVALID_STATE', message: expect.stringContaining('retired') })
    const listed = (await as.auditor.get(`/api/change-proposals?limitId=${limit.id}`).expect(200)).body
    expect(listed.total).toBe(0)
  })

  it('is taken up by a safety engineer into a change request, or declined with a reason, once', async () => {
    const { site, limit } = await buildActiveHeaterTrip({
      eng: as.engineer,
      approvers: [as.approver],
      tech: as.technician,
    })
    const raise = async () =>
      await as.operator.created('/api/change-proposals', {
        siteId: site.id,
        limitId: limit.id,
        title: 'Lower the trip',
        reason: 'Tube metal temperature margin',
      })
    const p1 = await raise()
    // only a safety engineer takes up or declines
    await as.supervisor.post(`/api/change-proposals/${p1.id}/decline`, { reason: 'no' }).expect(403)
    await as.approver.post(`/api/change-proposals/${p1.id}/take-up`, { changeRequestId: 1 }).expect(403)

    // developed into a draft request created from it: linked in the same step
    const cr = await draftChange(as.engineer, {
      siteId: site.id,
      title: 'Lower the trip to 770',
      proposalId: p1.id,
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 770 } }],
    })
    const taken = (await as.operator.get(`/api/change-proposals/${p1.id}`).expect(200)).body
    expect(taken).toMatchObject({ status: 'taken_up', changeRequestId: cr.id, decidedBy: expect.any(String) })
    // once
    await as.engineer.post(`/api/change-proposals/${p1.id}/decline`, { reason: 'late' }).expect(409)
    await as.engineer
      .post('/api/change-requests', {
        siteId: site.id,
        type: 'permanent',
        title: 'Again',
        proposalId: p1.id,
        items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 771 } }],
      })
      .expect(409)

    // taken up by linking an existing request of the site
    const p2 = await raise()
    await as.engineer.post(`/api/change-proposals/${p2.id}/take-up`, { changeRequestId: 2_000_000 }).expect(400)
    expect(
      (await as.engineer.post(`/api/change-proposals/${p2.id}/take-up`, { changeRequestId: cr.id }).expect(200)).body,
    ).toMatchObject({ status: 'taken_up', changeRequestId: cr.id })

    // declined: a reason is required
    const p3 = await raise()
    await as.engineer.post(`/api/change-proposals/${p3.id}/decline`, { reason: '  ' }).expect(400)
    const declined = (
      await as.engineer
        .post(`/api/change-proposals/${p3.id}/decline`, { reason: 'The margin is covered by the high alarm' })
        .expect(200)
    ).body
    expect(declined).toMatchObject({ status: 'declined', declineReason: 'The margin is covered by the high alarm' })
    await as.engineer.post(`/api/change-proposals/${p3.id}/take-up`, { changeRequestId: cr.id }).expect(409)
    const mail = await ctx.db
      .selectFrom('mail_outbox')
      .select(['to_addr', 'subject'])
      .where('subject', '=', `Change proposal #${p3.id} declined: Lower the trip`)
      .execute()
    expect(mail.map((m) => m.to_addr)).toEqual(['operator@fernhollow.example'])
    expect(await auditActions(ctx.db, 'ChangeProposal', p1.id, p3.id)).toEqual([
      'change_proposal.create',
      'change_proposal.take_up',
      'change_proposal.create',
      'change_proposal.decline',
    ])
    await as.engineer.get('/api/change-proposals/2000000').expect(404)
  })
})
