import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import type { Role } from '../../shared/schemas/users.ts'
import { signedIn, newAccount, useSignedIn, siteIdByCode } from './helpers/agent.ts'
import {
  submitAndApprove,
  draftChange,
  approveChange,
  buildActiveHeaterTrip,
  rowCounts,
  submitChange,
  firstItemImplementation,
  implementedEmergencyChange,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Separation of duties and the order of work of management of change (docs/change-requests.md#the-rule-book).
const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PDF = Buffer.from('%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\ntrailer << /Root 1 0 R >>\n%%EOF\n', 'latin1')
const PSSR = { reference: 'PSSR-2026-301', findings: 'none', readyForService: true }

const PEOPLE = ['engineer', 'approver', 'approver2', 'technician'] as const
const { as, app } = useSignedIn(ctx, PEOPLE)
let fhr: number

/** A user of the demo plant's refinery with the given roles there, signed in. */
async function person(email: string, name: string, roles: Role[]) {
  return newAccount(app(), await signedIn(app(), 'admin'), {
    email,
    displayName: name,
    password: 'separate-duties-password',
    roles: roles.map((role) => ({ siteId: fhr, role })),
  })
}

beforeAll(async () => {
  fhr = await siteIdByCode(as.engineer, 'FHR')
})

const crew = () => ({ eng: as.engineer, approvers: [as.approver, as.approver2], tech: as.technician })

describe('whoever changes the content, attachments included, is an editor and does not approve', () => {
  it('an engineer-approver who attached a file to a submitted request is refused the approval (403)', async () => {
    const dual = await person('attacher@fernhollow.example', 'Rowan Attwell', ['safety_engineer', 'approver'])
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Raise heater trip after tube survey',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    })
    const att = await dual.agent
      .upload(`/api/change-requests/${cr.id}/attachments`, {}, { name: 'tube-survey.pdf', content: PDF })
      .expect(201)
    expect(att.body.fileName).toBe('tube-survey.pdf')
    const after = (await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body
    expect(after.editorIds).toContain(dual.id)
    expect(after.contentHash).not.toBe(cr.contentHash)

    const before = await rowCounts(ctx.db)
    const res = await dual.agent.post(`/api/change-requests/${cr.id}/approvals`, {
      password: 'separate-duties-password',
    })
    expect(res.status).toBe(403)
    expect(res.body.error).toMatchObject({ code: 'FORBIDDEN', message: expect.stringContaining('edited') })
    expect(await rowCounts(ctx.db)).toEqual(before)
    // an independent approver may
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
  })

  it('no file is attached once someone signed, nor after approval (409, nothing written)', async () => {
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const cr = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Approved, then a late drawing',
      items: [{ kind: 'modify', limitId: limit.id, changes: { deadband: 4 } }],
    })
    expect(cr.status).toBe('approved')
    const before = await rowCounts(ctx.db)
    const res = await as.engineer.upload(
      `/api/change-requests/${cr.id}/attachments`,
      {},
      { name: 'late.pdf', content: PDF },
    )
    expect(res.status).toBe(409)
    expect(res.body.error.message).toContain('before anyone signs')
    expect(await rowCounts(ctx.db)).toEqual(before)
  })
})

describe('one person does not approve and implement the same change (common practice)', () => {
  it('an approver who is also a technician approves, then is refused the implementation (403)', async () => {
    const both = await person('approver-tech@fernhollow.example', 'Kit Doublehand', ['approver', 'technician'])
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Approved by a technician-approver',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 785 } }],
    })
    const approved = (
      await both.agent
        .post(`/api/change-requests/${cr.id}/approvals`, { password: 'separate-duties-password' })
        .expect(200)
    ).body
    expect(approved.status).toBe('approved')
    const before = await rowCounts(ctx.db)
    const res = await both.agent.post(
      `/api/change-requests/${cr.id}/implementations`,
      firstItemImplementation(approved, 'separate-duties-password'),
    )
    expect(res.status).toBe(403)
    expect(res.body.error.message).toContain('approved')
    expect(await rowCounts(ctx.db)).toEqual(before)
    // another technician implements it
    await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(approved, PW))
      .expect(200)
  })

  it('a shift supervisor who is also an approver implements an emergency change and may not approve it', async () => {
    const both = await person('supervisor-approver@fernhollow.example', 'Noor Twoshift', [
      'shift_supervisor',
      'approver',
    ])
    const { cr, done } = await implementedEmergencyChange(
      crew(),
      both.agent,
      'Lower trip at once after a hot spot',
      'separate-duties-password',
    )
    expect(done).toMatchObject({ status: 'implemented', approvedAt: null })
    const before = await rowCounts(ctx.db)
    const res = await both.agent.post(`/api/change-requests/${cr.id}/approvals`, {
      password: 'separate-duties-password',
    })
    expect(res.status).toBe(403)
    expect(res.body.error.message).toContain('implemented')
    expect(await rowCounts(ctx.db)).toEqual(before)
    // the waiting list does not offer it to them either
    const waiting = (await both.agent.get('/api/change-requests?view=waiting').expect(200)).body
    expect(waiting.items.map((i: { id: number }) => i.id)).not.toContain(cr.id)
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
  })
})

describe('order of management of change (OSHA 1910.119(l)(3)-(4) and (i))', () => {
  it('refuses implementation until the before-implementation group is done or not applicable', async () => {
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const created = await draftChange(as.engineer, {
      siteId: site.id,
      title: 'Alarm-free trip change',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 775 } }],
    })
    expect(created.checklist.map((c: { item: string; group: string }) => [c.item, c.group])).toEqual(
      IMPACT_CHECKLIST.map((c) => [c.item, c.group]),
    )
    await as.engineer.post(`/api/change-requests/${created.id}/submission`).expect(200)
    const approved = await approveChange([as.approver], created)
    const implement = () =>
      as.technician.post(`/api/change-requests/${created.id}/implementations`, firstItemImplementation(approved, PW))
    const before = await rowCounts(ctx.db)
    const refused = await implement()
    expect(refused.status).toBe(409)
    expect(refused.body.error.message).toContain('Operating procedures updated')
    expect(refused.body.error.message).toContain('Pre-start-up safety review signed')
    expect(await rowCounts(ctx.db)).toEqual(before)
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).not.toBe(775)

    // not applicable needs a reason
    const alarmResponseNotApplicable = () =>
      as.engineer.put(`/api/change-requests/${created.id}/checklist/alarm_response`, {
        done: true,
        notApplicable: true,
        note: 'A trip with no alarm: no alarm response sheet exists',
      })
    const noReason = await as.engineer.put(`/api/change-requests/${created.id}/checklist/alarm_response`, {
      done: true,
      notApplicable: true,
    })
    expect(noReason.status).toBe(400)
    expect(noReason.body.error.details.fields.note[0]).toContain('why')
    await alarmResponseNotApplicable().expect(200)
    await as.engineer
      .put(`/api/change-requests/${created.id}/checklist/operating_procedures`, { done: true })
      .expect(200)
    await as.engineer.put(`/api/change-requests/${created.id}/checklist/training`, { done: true }).expect(200)
    const stillOne = await implement()
    expect(stillOne.status).toBe(409)
    expect(stillOne.body.error.message).toContain('Pre-start-up safety review signed')
    expect(stillOne.body.error.message).not.toContain('Operating procedures')
    await as.engineer
      .put(`/api/change-requests/${created.id}/checklist/pssr`, { done: true, note: 'PSSR-2026-301' })
      .expect(200)
    const done = (await implement().expect(200)).body
    expect(done.status).toBe('implemented')
    const na = done.checklist.find((c: { item: string }) => c.item === 'alarm_response')
    expect(na).toMatchObject({ notApplicable: true, note: 'A trip with no alarm: no alarm response sheet exists' })

    // the implementation signature covers the before-implementation checklist as it stood
    const sig = () =>
      as.engineer.get(`/api/change-requests/${created.id}`).then(
        (r) =>
          r.body.signatures.find((s: { meaning: string }) => s.meaning === 'implemented') as {
            matchesContent: boolean
          },
      )
    expect((await sig()).matchesContent).toBe(true)
    await as.engineer.put(`/api/change-requests/${created.id}/checklist/alarm_response`, { done: true }).expect(200)
    expect((await sig()).matchesContent).toBe(false)
    await alarmResponseNotApplicable().expect(200)
    expect((await sig()).matchesContent).toBe(true)

    // closure needs the close-out group only
    const early = await as.engineer.post(`/api/change-requests/${created.id}/closure`, { password: PW, pssr: PSSR })
    expect(early.status).toBe(400)
    expect(early.body.error.details.fields.checklist).toHaveLength(
      IMPACT_CHECKLIST.filter((c) => c.group === 'closeout').length,
    )
    await as.engineer
      .put(`/api/change-requests/${created.id}/checklist/safety_requirements`, {
        done: true,
        notApplicable: true,
        note: 'Not a safety instrumented function',
      })
      .expect(200)
    for (const item of ['cause_and_effect', 'drawings'])
      await as.engineer.put(`/api/change-requests/${created.id}/checklist/${item}`, { done: true }).expect(200)
    const closed = (
      await as.engineer.post(`/api/change-requests/${created.id}/closure`, { password: PW, pssr: PSSR }).expect(200)
    ).body
    expect(closed.status).toBe('closed')
    expect(closed.signatures.every((s: { matchesContent: boolean }) => s.matchesContent)).toBe(true)
  })
})
