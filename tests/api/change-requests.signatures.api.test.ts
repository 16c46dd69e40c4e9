import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { contentHash } from '../../server/features/signatures/signatures.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { ApiAgent, useSignedIn } from './helpers/agent.ts'
import {
  draftChange,
  type ChangeCrew,
  buildActiveHeaterTrip,
  buildHeaterTrip,
  HEATER_SUBSYSTEMS,
  rowCounts,
  submitChange,
  readyToImplement,
  firstItemImplementation,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// A small account limit so the test reaches it; the window as in production.
const ctx = useTestDb({ env: { SIGNIN_MAX_FAILURES_PER_ACCOUNT: '3', SIGNIN_WINDOW_MINUTES: '15' } })
const PW = DEMO_PASSWORD
const PSSR = { reference: 'PSSR-2026-330', findings: 'none', readyForService: true }

const PEOPLE = ['engineer', 'approver', 'approver2', 'technician', 'auditor'] as const
const { as, app } = useSignedIn(ctx, PEOPLE)
const crew = (): ChangeCrew => ({ eng: as.engineer, approvers: [as.approver, as.approver2], tech: as.technician })
const ids: Record<string, number> = {}

beforeAll(async () => {
  for (const u of await ctx.db.selectFrom('app_user').select(['id', 'email']).execute())
    ids[u.email.split('@')[0]] = u.id
})

const signaturesOf = (crId: number) =>
  ctx.db
    .selectFrom('signature')
    .selectAll()
    .where('entity_type', '=', 'ChangeRequest')
    .where('entity_id', '=', crId)
    .orderBy('id')
    .execute()
const auditOf = (crId: number, action: string) =>
  ctx.db
    .selectFrom('audit_event')
    .selectAll()
    .where('entity_type', '=', 'ChangeRequest')
    .where('entity_id', '=', String(crId))
    .where('action', '=', action)
    .execute()

/** The row counts `before` and a refused signature: only the failed attempt and its audit event are written. */
const withFailedAttempt = (before: Awaited<ReturnType<typeof rowCounts>>) => ({
  ...before,
  auditEvents: before.auditEvents + 1,
  signatureAttempts: before.signatureAttempts + 1,
})

describe('electronic signatures on change requests (21 CFR Part 11 as a model)', () => {
  it('a wrong password signs nothing, is recorded as a failed attempt, and counts against the sign-in limit', async () => {
    const { site, limit } = await buildHeaterTrip(as.engineer)
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Wrong password',
      items: [{ kind: 'create', limitId: limit.id }],
    })

    // 21 CFR 11.200(a): the signer re-enters the password; a wrong one signs nothing
    const before = await rowCounts(ctx.db)
    const wrong = await as.approver
      .post(`/api/change-requests/${cr.id}/approvals`, { password: 'not-the-password' })
      .expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    expect(await rowCounts(ctx.db)).toEqual(withFailedAttempt(before))
    expect(await signaturesOf(cr.id)).toEqual([])
    const failed = await auditOf(cr.id, 'signature.failed')
    expect(failed).toHaveLength(1)
    expect(failed[0].actor_id).toBe(ids.approver)
    const attempts = await ctx.db
      .selectFrom('sign_in_attempt')
      .selectAll()
      .where('email', '=', 'approver@fernhollow.example')
      .where('success', '=', false)
      .execute()
    expect(attempts.map((a) => a.purpose)).toEqual(['signature'])

    // OWASP ASVS 2.2.1 (sign-in throttling): signature failures count like sign-in failures; the limit is 3 here
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: 'still-wrong' }).expect(403)
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: 'wrong-again' }).expect(403)
    const blocked = await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(429)
    expect(blocked.body.error.code).toBe('RATE_LIMITED')
    expect(await signaturesOf(cr.id)).toEqual([])
    expect((await as.approver.get(`/api/change-requests/${cr.id}`).expect(200)).body).toMatchObject({
      status: 'submitted',
      approvalsHeld: 0,
    })
    // and so is a fresh sign-in with the correct password
    const fresh = new ApiAgent(app())
    await fresh.refreshCsrf()
    expect(
      (await fresh.post('/api/session', { email: 'approver@fernhollow.example', password: PW }).expect(429)).body.error
        .code,
    ).toBe('RATE_LIMITED')

    // a wrong password at implementation changes nothing on the limit either
    await as.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
    const implBefore = await rowCounts(ctx.db)
    const implWrong = await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(cr, 'nope-nope'))
      .expect(403)
    expect(implWrong.body.error.code).toBe('SIGNATURE_INVALID')
    expect(await rowCounts(ctx.db)).toEqual(withFailedAttempt(implBefore))
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('proposed')

    // once the failures are older than the window the correct password works again
    ctx.clock.advance(16 * 60_000)
    await fresh.post('/api/session', { email: 'approver@fernhollow.example', password: PW }).expect(201)
  })

  it('a SIL-rated change stays submitted after one approval and is approved by the second approver', async () => {
    const { site, limit } = await buildHeaterTrip(as.engineer, { sil: 2 })
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'SIL 2 trip in service',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    // site policy (common practice): two approvals for SIL-rated functions
    expect(cr.approvalsRequired).toBe(2)
    expect(cr.items[0].silRated).toBe(true)

    const one = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body
    expect(one).toMatchObject({ status: 'submitted', approvalsHeld: 1, approvedAt: null })
    // one person signs once
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(409)).body.error.code,
    ).toBe('INVALID_STATE')
    // not implementable with one approval
    const early = await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(cr, PW))
      .expect(409)
    expect(early.body.error.code).toBe('INVALID_STATE')
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('proposed')

    const two = (await as.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body
    expect(two).toMatchObject({ status: 'approved', approvalsHeld: 2 })
    expect(two.signatures.map((s: { name: string }) => s.name)).toEqual(['Arlo Pennick', 'Ines Harrowgate'])
    await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(cr, PW))
      .expect(200)
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('active')
  })

  it('a change that makes a limit SIL-rated needs the SIL number of approvals', async () => {
    const { site, limit } = await buildActiveHeaterTrip({ ...crew(), approvers: [as.approver] })
    expect(limit.sil).toBeNull()
    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Rate the heater trip SIL 1',
      items: [{ kind: 'modify', limitId: limit.id, changes: { sil: 1, subsystems: HEATER_SUBSYSTEMS } }],
    })
    expect(cr.approvalsRequired).toBe(2)
    expect(
      (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
    ).toBe('submitted')
  })

  it('two approvers at the same moment on a request that needs one: exactly one approval, a clear 409 for the other', async () => {
    for (let round = 0; round < 3; round++) {
      const { site, limit } = await buildHeaterTrip(as.engineer)
      const cr = await submitChange(as.engineer, {
        siteId: site.id,
        title: `Race ${round}`,
        items: [{ kind: 'create', limitId: limit.id }],
      })
      expect(cr.approvalsRequired).toBe(1)
      const results = await Promise.all([
        as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }),
        as.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }),
      ])
      expect(results.map((r) => r.status).sort()).toEqual([200, 409])
      const loser = results.find((r) => r.status === 409)!
      expect(loser.body.error.code).toBe('INVALID_STATE')
      const sigs = await signaturesOf(cr.id)
      expect(sigs).toHaveLength(1)
      expect(sigs[0].meaning).toBe('approved')
      expect(await auditOf(cr.id, 'change_request.approve')).toHaveLength(1)
      const mails = await ctx.db
        .selectFrom('mail_outbox')
        .select('to_addr')
        .where('subject', 'like', `Change request #${cr.id} approved:%`)
        .execute()
      expect(mails.map((m) => m.to_addr)).toEqual(['engineer@fernhollow.example'])
      expect((await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body).toMatchObject({
        status: 'approved',
        approvalsHeld: 1,
      })
    }
  })

  it('every step lands in the audit trail with the content hash; signatures keep name, time, meaning and hash', async () => {
    const { site, limit } = await buildActiveHeaterTrip({ ...crew(), approvers: [as.approver] })
    const cr = await draftChange(as.engineer, {
      siteId: site.id,
      title: 'Raise heater trip to 795',
      rationale: 'Coking margin',
      hazardReference: 'HAZOP-2026-11',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 795 } }],
    })
    // the hash covers exactly the type, texts, items and attachments of the request (SHA-256 of canonical JSON)
    expect(cr.contentHash).toBe(
      contentHash({
        type: 'permanent',
        title: 'Raise heater trip to 795',
        rationale: 'Coking margin',
        hazardReference: 'HAZOP-2026-11',
        expiresAt: null,
        items: [
          { kind: 'modify', limitId: limit.id, instrumentId: null, changes: { setpoint: { from: 780, to: 795 } } },
        ],
        attachments: [],
      }),
    )
    await readyToImplement(as.engineer, cr.id)
    await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
    const t0 = ctx.clock.now().getTime()
    const approved = (
      await as.approver
        .post(`/api/change-requests/${cr.id}/approvals`, { password: PW, comment: 'margin checked' })
        .expect(200)
    ).body
    const t1 = ctx.clock.now().getTime()
    await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, {
        itemId: cr.items[0].id,
        readBack: { setpoint: 795 },
        password: PW,
      })
      .expect(200)
    for (const c of IMPACT_CHECKLIST)
      await as.engineer.put(`/api/change-requests/${cr.id}/checklist/${c.item}`, { done: true }).expect(200)
    const closed = (
      await as.engineer.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }).expect(200)
    ).body

    // 21 CFR 11.10(e) audit trail: each step with its actor and the hash of the content it concerned
    const trail = (
      await as.auditor.get(`/api/audit-events?entityType=ChangeRequest&entityId=${cr.id}&pageSize=200`).expect(200)
    ).body.items as { action: string; actorId: number; after: { contentHash?: string } }[]
    const steps: [string, string][] = [
      ['change_request.create', 'engineer'],
      ['change_request.submit', 'engineer'],
      ['change_request.approve', 'approver'],
      ['change_request.implement', 'technician'],
      ['change_request.close', 'engineer'],
    ]
    for (const [action, who] of steps) {
      const events = trail.filter((e) => e.action === action)
      expect(events, action).toHaveLength(1)
      expect(events[0].actorId, action).toBe(ids[who])
      expect(events[0].after.contentHash, action).toBe(cr.contentHash)
    }

    // 21 CFR 11.50 signature manifestation: name, date and time, meaning; plus the hash of what was signed
    const approval = approved.signatures[0]
    expect(approval).toMatchObject({
      userId: ids.approver,
      name: 'Arlo Pennick',
      meaning: 'approved',
      contentHash: cr.contentHash,
      comment: 'margin checked',
      voided: false,
      matchesContent: true,
    })
    const at = new Date(approval.at).getTime()
    expect(at).toBeGreaterThanOrEqual(t0)
    expect(at).toBeLessThanOrEqual(t1)
    expect(closed.signatures.map((s: { meaning: string }) => s.meaning)).toEqual(['approved', 'implemented', 'closed'])
    expect(closed.signatures.every((s: { matchesContent: boolean }) => s.matchesContent)).toBe(true)

    // 21 CFR 11.70 signature/record linking: content changed afterwards (outside the application) no longer matches
    const owner = new pg.Client({ connectionString: ctx.database.ownerUrl })
    await owner.connect()
    try {
      const tampered = contentHash({
        type: 'permanent',
        title: 'Raise heater trip to 850',
        rationale: 'Coking margin',
        hazardReference: 'HAZOP-2026-11',
        expiresAt: null,
        items: [],
      })
      await owner.query('UPDATE change_request SET title = $1, content_hash = $2 WHERE id = $3', [
        'Raise heater trip to 850',
        tampered,
        cr.id,
      ])
    } finally {
      await owner.end()
    }
    const after = (await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body
    expect(after.signatures).toHaveLength(3)
    expect(after.signatures.map((s: { matchesContent: boolean }) => s.matchesContent)).toEqual([false, false, false])
    // the signature records themselves are unchanged
    expect(after.signatures[0]).toMatchObject({
      name: 'Arlo Pennick',
      meaning: 'approved',
      at: approval.at,
      contentHash: cr.contentHash,
    })
  })
})
