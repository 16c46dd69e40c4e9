import type { Response } from 'supertest'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { ApiAgent, useSignedIn, DEMO_ACCOUNTS } from './helpers/agent.ts'
import {
  draftChange,
  buildActiveHeaterTrip,
  buildHeaterTrip,
  rowCounts,
  submitChange,
  readyToImplement,
  firstItemImplementation,
  dualRoleApprover,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = DEMO_ACCOUNTS
type Who = (typeof PEOPLE)[number]
const PSSR = { reference: 'PSSR-2026-201', findings: 'none', readyForService: true }

const { as, app } = useSignedIn(ctx, PEOPLE)

/**
 * Everyone except `allowed` tries the action: each gets 403 FORBIDDEN and nothing is written (no request, item,
 * signature, revision, mail or audit event; no request changes state or version).
 */
async function refusedForAllBut(allowed: Who[], call: (a: ApiAgent) => Promise<Response>) {
  for (const who of PEOPLE.filter((p) => !allowed.includes(p))) {
    const before = await rowCounts(ctx.db)
    const res = await call(as[who])
    expect(res.status, `${who}: ${JSON.stringify(res.body)}`).toBe(403)
    expect(res.body.error.code, who).toBe('FORBIDDEN')
    expect(await rowCounts(ctx.db), who).toEqual(before)
  }
}

const tinyPdf = Buffer.from('%PDF-1.4\n1 0 obj << >> endobj\ntrailer << >>\n%%EOF\n', 'latin1')

describe('change request: who may do what along the whole path (docs/security.md, "Authorization")', () => {
  it('permanent change: engineer creates, edits, submits; approver approves; technician implements; engineer closes; everyone else gets 403', async () => {
    const crew = { eng: as.engineer, approvers: [as.approver], tech: as.technician }
    const { site, limit } = await buildActiveHeaterTrip(crew)
    const body = {
      siteId: site.id,
      type: 'permanent',
      title: 'Raise heater trip',
      rationale: 'HAZOP action 7',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    }

    // OSHA 1910.119(l) management of change: only the safety engineer proposes
    await refusedForAllBut(['engineer'], (a) => a.post('/api/change-requests', body))
    const cr = await as.engineer.created('/api/change-requests', body)
    expect(cr).toMatchObject({ status: 'draft', proposerId: expect.any(Number), approvalsRequired: 1 })

    await refusedForAllBut(['engineer'], (a) =>
      a.patch(`/api/change-requests/${cr.id}`, { rationale: 'HAZOP action 7, revised' }),
    )
    expect(
      (await as.engineer.patch(`/api/change-requests/${cr.id}`, { rationale: 'HAZOP action 7, revised' }).expect(200))
        .body.rationale,
    ).toBe('HAZOP action 7, revised')

    await refusedForAllBut(['engineer'], (a) =>
      a.put(`/api/change-requests/${cr.id}/checklist/drawings`, { done: true }),
    )
    await refusedForAllBut(['engineer'], (a) =>
      a.upload(`/api/change-requests/${cr.id}/attachments`, {}, { name: 'loop-diagram.pdf', content: tinyPdf }),
    )

    await refusedForAllBut(['engineer'], (a) => a.post(`/api/change-requests/${cr.id}/submission`))
    await readyToImplement(as.engineer, cr.id)
    expect((await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)).body.status).toBe(
      'submitted',
    )

    // IEC 61511 independence of approver: only approvers, and with their correct password, still refused to others
    await refusedForAllBut(['approver', 'approver2'], (a) =>
      a.post(`/api/change-requests/${cr.id}/rejections`, { password: PW, comment: 'no' }),
    )
    await refusedForAllBut(['approver', 'approver2'], (a) =>
      a.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }),
    )
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
    ).toBe('approved')

    // a permanent change is implemented by a technician; a shift supervisor only implements emergency changes
    const implement = firstItemImplementation(cr, PW)
    await refusedForAllBut(['technician'], (a) => a.post(`/api/change-requests/${cr.id}/implementations`, implement))
    expect(
      (await as.technician.post(`/api/change-requests/${cr.id}/implementations`, implement).expect(200)).body.status,
    ).toBe('implemented')
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(790)

    for (const c of IMPACT_CHECKLIST)
      await as.engineer.put(`/api/change-requests/${cr.id}/checklist/${c.item}`, { done: true }).expect(200)
    // OSHA 1910.119(i) pre-start-up safety review, signed by the safety engineer
    await refusedForAllBut(['engineer'], (a) =>
      a.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }),
    )
    const closed = (
      await as.engineer.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }).expect(200)
    ).body
    expect(closed.status).toBe('closed')
    expect(closed.signatures.map((s: { meaning: string; name: string }) => [s.meaning, s.name])).toEqual([
      ['approved', 'Arlo Pennick'],
      ['implemented', 'Tomas Quillfeather'],
      ['closed', 'Selma Rookwood'],
    ])
  })

  it('withdrawal: only the engineer withdraws a draft or a submitted request', async () => {
    const { site, limit } = await buildHeaterTrip(as.engineer)
    const withdrawnByEngineerOnly = async (crId: number) => {
      await refusedForAllBut(['engineer'], (a) => a.post(`/api/change-requests/${crId}/withdrawal`))
      const withdrawn = (await as.engineer.post(`/api/change-requests/${crId}/withdrawal`).expect(200)).body
      expect(withdrawn.status).toBe('withdrawn')
    }
    const draft = await draftChange(as.engineer, {
      siteId: site.id,
      title: 'Draft to withdraw',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    await withdrawnByEngineerOnly(draft.id)

    const submitted = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Submitted, then withdrawn',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    await withdrawnByEngineerOnly(submitted.id)
    // a withdrawn request is not approved any more
    const late = await as.approver.post(`/api/change-requests/${submitted.id}/approvals`, { password: PW }).expect(409)
    expect(late.body.error.code).toBe('INVALID_STATE')
  })

  it('emergency change: the shift supervisor implements first, an approver signs afterwards, then the engineer closes', async () => {
    const crew = { eng: as.engineer, approvers: [as.approver], tech: as.technician }
    const { site, limit } = await buildActiveHeaterTrip(crew)
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      type: 'emergency',
      title: 'Lower trip after tube thinning',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 770 } }],
    })
    const implement = firstItemImplementation(cr, PW)
    await refusedForAllBut(['supervisor', 'technician'], (a) =>
      a.post(`/api/change-requests/${cr.id}/implementations`, implement),
    )
    const done = (await as.supervisor.post(`/api/change-requests/${cr.id}/implementations`, implement).expect(200)).body
    expect(done).toMatchObject({ status: 'implemented', approvedAt: null })
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(770)

    for (const c of IMPACT_CHECKLIST)
      await as.engineer.put(`/api/change-requests/${cr.id}/checklist/${c.item}`, { done: true }).expect(200)
    // not closed before the approval after the fact
    const early = await as.engineer
      .post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR })
      .expect(409)
    expect(early.body.error.code).toBe('INVALID_STATE')

    await refusedForAllBut(['approver', 'approver2'], (a) =>
      a.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }),
    )
    const approved = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200))
      .body
    expect(approved.status).toBe('implemented')
    expect(approved.approvedAt).toEqual(expect.any(String))
    expect(
      (await as.engineer.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }).expect(200)).body
        .status,
    ).toBe('closed')
  })
})

describe('separation of duties (IEC 61511 independence of approver; OSHA 1910.119(l))', () => {
  let dual: ApiAgent
  let dualId: number

  beforeAll(async () => {
    // an approver whom the admin gives the safety-engineer role too
    const made = await dualRoleApprover(app(), as.admin)
    expect(made.roles).toHaveLength(2)
    dual = made.agent
    dualId = made.id
  })

  it("refuses the proposer's own approval even when they hold the approver role (403, nothing written)", async () => {
    const { site, limit } = await buildHeaterTrip(dual)
    const cr = await submitChange(dual, {
      siteId: site.id,
      title: 'Proposed by a dual-role user',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    expect(cr.proposerId).toBe(dualId)
    const before = await rowCounts(ctx.db)
    const res = await dual
      .post(`/api/change-requests/${cr.id}/approvals`, { password: 'dual-role-password' })
      .expect(403)
    expect(res.body.error).toMatchObject({ code: 'FORBIDDEN', message: expect.stringContaining('proposed') })
    const rej = await dual
      .post(`/api/change-requests/${cr.id}/rejections`, { password: 'dual-role-password', comment: 'mine' })
      .expect(403)
    expect(rej.body.error.code).toBe('FORBIDDEN')
    expect(await rowCounts(ctx.db)).toEqual(before)
    // an independent approver may
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
    ).toBe('approved')
  })

  it('refuses the approval of someone who edited the request (403, nothing written)', async () => {
    const { site, limit } = await buildHeaterTrip(as.engineer)
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Edited by a dual-role user',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    const edited = (
      await dual.patch(`/api/change-requests/${cr.id}`, { hazardReference: 'HAZOP-2026-03 node 4' }).expect(200)
    ).body
    expect(edited.editorIds).toContain(dualId)
    expect(edited.status).toBe('draft')
    await readyToImplement(as.engineer, cr.id)
    await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)

    const before = await rowCounts(ctx.db)
    const res = await dual
      .post(`/api/change-requests/${cr.id}/approvals`, { password: 'dual-role-password' })
      .expect(403)
    expect(res.body.error).toMatchObject({ code: 'FORBIDDEN', message: expect.stringContaining('edited') })
    expect(await rowCounts(ctx.db)).toEqual(before)
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
    ).toBe('approved')
  })

  it('editing a submitted request returns it to draft and voids its signatures', async () => {
    const { site, limit } = await buildHeaterTrip(as.engineer, { sil: 2 })
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'SIL 2 heater trip in service',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    expect(cr.approvalsRequired).toBe(2)
    const once = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body
    expect(once).toMatchObject({ status: 'submitted', approvalsHeld: 1 })

    const edited = (await as.engineer.patch(`/api/change-requests/${cr.id}`, { rationale: 'SRS rev B' }).expect(200))
      .body
    expect(edited).toMatchObject({ status: 'draft', approvalsHeld: 0, submittedAt: null })
    expect(edited.contentHash).not.toBe(cr.contentHash)
    expect(edited.signatures).toHaveLength(1)
    expect(edited.signatures[0]).toMatchObject({
      meaning: 'approved',
      name: 'Arlo Pennick',
      voided: true,
      voidReason: 'request edited after submission',
    })
    const update = await ctx.db
      .selectFrom('audit_event')
      .select(['after'])
      .where('action', '=', 'change_request.update')
      .where('entity_id', '=', String(cr.id))
      .executeTakeFirstOrThrow()
    expect(update.after).toMatchObject({ status: 'draft', signaturesVoided: 1, contentHash: edited.contentHash })

    // a draft is not approved; once resubmitted it needs both approvals again
    expect(
      (await as.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(409)).body.error
        .code,
    ).toBe('INVALID_STATE')
    await readyToImplement(as.engineer, cr.id)
    await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
    expect(
      (await as.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body,
    ).toMatchObject({ status: 'submitted', approvalsHeld: 1 })
    const both = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body
    expect(both).toMatchObject({ status: 'approved', approvalsHeld: 2 })
    expect(
      both.signatures
        .filter((s: { voided: boolean }) => !s.voided)
        .every((s: { contentHash: string }) => s.contentHash === edited.contentHash),
    ).toBe(true)
  })
})
