import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn, newAccount } from './helpers/agent.ts'
import {
  auditActions,
  approveChange,
  buildHeaterTrip,
  implementChange,
  rowCounts,
  submitChange,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Discipline reviews as a site policy (docs/change-requests.md#discipline-reviews): the policy names the reviews a
// change request needs (operations, process, instrumentation; none by default); each reviewer signs, with comments,
// before the approver; the reviewer is never the proposer, and a reviewer does not approve the same request. Who
// reviews which discipline and the order are common practice; OSHA 1910.119(l)(2) asks that the technical basis and
// the impact on safety and health be addressed before the change (from memory).
const ctx = useTestDb()
const PEOPLE = ['admin', 'engineer', 'approver', 'approver2', 'technician', 'supervisor', 'operator'] as const
let app: Express
const as = {} as Record<(typeof PEOPLE)[number] | 'engineer2' | 'approverSupervisor', ApiAgent>
let fhr: { id: number }

/** the password of the accounts made here (the demo password is too weak for a new account) */
const PW = 'reviewer account password 7'
const passwords = new Map<ApiAgent, string>()
async function person(email: string, roles: string[]) {
  const { agent: a } = await newAccount(app, as.admin, {
    email,
    displayName: email.split('@')[0],
    password: PW,
    roles: roles.map((role) => ({ siteId: fhr.id, role })),
  })
  passwords.set(a, PW)
  return a
}
const setReviews = async (disciplineReviews: string[]) =>
  as.admin.patch(`/api/sites/${fhr.id}`, { policy: { disciplineReviews } }).expect(200)

/** A submitted request putting a new heater trip in service at Fernhollow. */
async function submitted() {
  const { limit } = await buildHeaterTrip(as.engineer)
  return submitChange(as.engineer, { siteId: fhr.id, items: [{ kind: 'create', limitId: limit.id }] })
}
const review = (who: ApiAgent, id: number, discipline: string, extra: Record<string, unknown> = {}) =>
  who.post(`/api/change-requests/${id}/reviews`, {
    discipline,
    password: passwords.get(who) ?? DEMO_PASSWORD,
    ...extra,
  })

beforeAll(async () => {
  app = createApp(ctx)
  for (const who of PEOPLE) as[who] = await signedIn(app, who)
  fhr = (await as.admin.get('/api/sites').expect(200)).body.items.find((s: { code: string }) => s.code === 'FHR')
  as.engineer2 = await person('engineer.two@fernhollow.example', ['safety_engineer'])
  as.approverSupervisor = await person('dual.role@fernhollow.example', ['approver', 'shift_supervisor'])
})

describe('discipline reviews', () => {
  it('are not asked by default: a request is approved as before, and a review is refused as not needed', async () => {
    const site = (await as.admin.get(`/api/sites/${fhr.id}`).expect(200)).body
    expect(site.policy.disciplineReviews).toEqual([])
    const cr = await submitted()
    expect(cr.reviewsRequired).toEqual([])
    const res = await review(as.supervisor, cr.id, 'operations').expect(409)
    expect(res.body.error.message).toContain('needs no operations review')
    expect((await approveChange([as.approver], cr)).status).toBe('approved')
  })

  it('the policy refuses an unknown or repeated discipline', async () => {
    await as.admin.patch(`/api/sites/${fhr.id}`, { policy: { disciplineReviews: ['electrical'] } }).expect(400)
    await as.admin.patch(`/api/sites/${fhr.id}`, { policy: { disciplineReviews: ['process', 'process'] } }).expect(400)
  })

  it('are signed by the right roles, with comments, before the approver; the approval is refused until then', async () => {
    await setReviews(['operations', 'process', 'instrumentation'])
    const cr = await submitted()
    expect(cr.reviewsRequired).toEqual(['operations', 'process', 'instrumentation'])

    // the approver waits for the reviews: 409 naming them, nothing written
    const before = await rowCounts(ctx.db)
    const early = await as.approver
      .post(`/api/change-requests/${cr.id}/approvals`, { password: DEMO_PASSWORD })
      .expect(409)
    expect(early.body.error.message).toContain('operations, process and instrumentation reviews are not signed yet')
    expect(await rowCounts(ctx.db)).toEqual(before)

    // the wrong people: 403 before the password is checked, nothing written
    await review(as.operator, cr.id, 'operations').expect(403)
    await review(as.approver, cr.id, 'operations').expect(403)
    await review(as.supervisor, cr.id, 'instrumentation').expect(403)
    expect((await review(as.engineer, cr.id, 'process').expect(403)).body.error.message).toContain('proposed')
    expect(await rowCounts(ctx.db)).toEqual(before)
    // a wrong password signs nothing
    const wrong = await review(as.supervisor, cr.id, 'operations', { password: 'not the password' }).expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    // an unknown discipline is a 400
    await review(as.supervisor, cr.id, 'electrical').expect(400)

    const ops = (
      await review(as.supervisor, cr.id, 'operations', { comment: 'Start-up procedure step 14 updated' }).expect(200)
    ).body
    const sig = ops.signatures.find((s: { meaning: string }) => s.meaning === 'reviewed_operations')
    expect(sig).toMatchObject({
      name: 'Hedda Marlowe',
      comment: 'Start-up procedure step 14 updated',
      contentHash: cr.contentHash,
      matchesContent: true,
      voided: false,
    })
    // once per discipline
    await review(as.supervisor, cr.id, 'operations').expect(409)
    await review(as.approverSupervisor, cr.id, 'operations').expect(409)

    await review(as.technician, cr.id, 'instrumentation', { comment: 'Range and tag checked' }).expect(200)
    const still = await as.approver
      .post(`/api/change-requests/${cr.id}/approvals`, { password: DEMO_PASSWORD })
      .expect(409)
    expect(still.body.error.message).toContain('the process review is not signed yet')
    await review(as.engineer2, cr.id, 'process').expect(200)

    const approved = await approveChange([as.approver], cr)
    expect(approved.status).toBe('approved')
    await implementChange(as.technician, approved)
    const events = await auditActions(ctx.db, 'ChangeRequest', cr.id)
    expect(events.filter((a) => a === 'change_request.review')).toHaveLength(3)
    // once approved, no more reviews
    await review(as.engineer2, cr.id, 'process').expect(409)
  })

  it('keeps reviewers and approvers apart, and an edit voids the reviews', async () => {
    await setReviews(['operations'])
    const cr = await submitted()
    // a person holding both roles reviews, then may not approve the same request
    await review(as.approverSupervisor, cr.id, 'operations').expect(200)
    const res = await as.approverSupervisor
      .post(`/api/change-requests/${cr.id}/approvals`, { password: PW })
      .expect(403)
    expect(res.body.error.message).toContain('reviewed')

    // editing the submitted request voids the review; resubmitted, it waits for a new one
    await as.engineer.patch(`/api/change-requests/${cr.id}`, { title: 'Heater trip, revised' }).expect(200)
    const again = (await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)).body
    expect(again.signatures.find((s: { meaning: string }) => s.meaning === 'reviewed_operations').voided).toBe(true)
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: DEMO_PASSWORD }).expect(409)
    await review(as.supervisor, cr.id, 'operations').expect(200)
    expect((await approveChange([as.approver], again)).status).toBe('approved')

    // a request keeps the reviews asked when it was written: a later policy change does not move it
    const pending = await submitted()
    await setReviews([])
    const read = (await as.approver.get(`/api/change-requests/${pending.id}`).expect(200)).body
    expect(read.reviewsRequired).toEqual(['operations'])
    await as.approver.post(`/api/change-requests/${pending.id}/approvals`, { password: DEMO_PASSWORD }).expect(409)
  })
})
