import { describe, expect, it } from 'vitest'
import { createChangeRequestJob } from '../../server/features/change-requests/change-requests.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import {
  submitAndApprove,
  auditActions,
  approvedTemporaryChange,
  buildActiveHeaterTrip,
  implementChange,
  firstItemImplementation,
  implementedEmergencyChange,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const HOUR = 3_600_000
const DAY = 24 * HOUR
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor'] as const
const mailbox = useFakeSmtp(ctx)
const { deliver, mailsFor } = mailbox
const { as, signInAll } = useSignedIn(ctx, PEOPLE)

const runDeadlines = () => createChangeRequestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
const crew = () => ({ eng: as.engineer, approvers: [as.approver], tech: as.technician })
const crRow = (id: number) =>
  ctx.db.selectFrom('change_request').selectAll().where('id', '=', id).executeTakeFirstOrThrow()

describe('change request deadlines job', () => {
  it('reminds the proposer once when a temporary change expires within 24 h', async () => {
    await signInAll()
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const expiresAt = new Date(ctx.clock.now().getTime() + 3 * DAY)
    const cr = await approvedTemporaryChange(
      crew(),
      { site, limit },
      {
        title: 'Temporary raise during catalyst dry-out',
        setpoint: 800,
        expiresAt,
      },
    )
    await implementChange(as.technician, cr)

    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })
    ctx.clock.set(new Date(expiresAt.getTime() - 25 * HOUR))
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })
    expect((await crRow(cr.id)).revert_reminder_at).toBeNull()

    ctx.clock.set(new Date(expiresAt.getTime() - 23 * HOUR))
    expect(await runDeadlines()).toEqual({ reminders: 1, flagged: 0, expired: 0, toRevert: 0 })
    const subject = `Temporary change #${cr.id} expires`
    const [reminder] = await mailsFor(subject, ['engineer@fernhollow.example'])
    expect(reminder.text).toContain(`${ctx.config.appUrl}/changes/${cr.id}`)
    expect(reminder.html).toEqual(expect.stringContaining(`href="${ctx.config.appUrl}/changes/${cr.id}"`))
    expect(reminder.text).toContain('Revert it on the device')

    // not twice: neither a later run nor one after the expiry sends it again (after it, the expiry notice goes out)
    ctx.clock.advance(HOUR)
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })
    ctx.clock.set(new Date(expiresAt.getTime() + HOUR))
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 1 })
    await deliver()
    expect(mailbox.startingWith(subject)).toHaveLength(1)
    const events = await auditActions(ctx.db, 'ChangeRequest', cr.id)
    expect(events.filter((a) => a === 'change_request.revert_reminder')).toHaveLength(1)

    // reverted, so the later tests of this file see no expired temporary change
    await signInAll()
    const reversal = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Reversal of the dry-out raise',
      reversesId: cr.id,
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 780 } }],
    })
    await implementChange(as.technician, reversal)
  })

  it('flags an emergency change implemented by the shift supervisor and still unapproved after 24 h, and tells approvers and the plant manager', async () => {
    await signInAll()
    const { cr, done } = await implementedEmergencyChange(crew(), as.supervisor, 'Lower trip after tube thinning found')
    expect(done).toMatchObject({ status: 'implemented', approvedAt: null, emergencyFlagged: false })
    const implementedAt = new Date(done.implementedAt).getTime()

    ctx.clock.set(new Date(implementedAt + 23 * HOUR))
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })

    // common practice (site procedure): an emergency change is approved within 24 h of its implementation
    ctx.clock.set(new Date(implementedAt + 24 * HOUR + 60_000))
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 1, expired: 0, toRevert: 0 })
    const subject = `Emergency change #${cr.id} is still unapproved after 24 h`
    const expected = ['approver@fernhollow.example', 'approver2@fernhollow.example', 'manager@fernhollow.example']
    const mails = await mailsFor(subject, expected)
    expect(mails.flatMap(recipients).sort()).toEqual([...expected].sort())
    for (const m of mails) expect(m.text).toContain(`${ctx.config.appUrl}/changes/${cr.id}`)

    ctx.clock.advance(HOUR)
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })
    await deliver()
    expect(mailbox.smtp.inbox.filter((m) => m.subject === subject)).toHaveLength(3)

    await signInAll()
    expect((await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body.emergencyFlagged).toBe(true)
    // approved after the fact; it stays on record as flagged
    const approved = (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200))
      .body
    expect(approved).toMatchObject({ status: 'implemented', emergencyFlagged: true, approvedAt: expect.any(String) })
  })

  it('voids an approval older than 30 days that was not implemented; implementation is refused until approved again', async () => {
    await signInAll()
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const cr = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Raise trip to 790',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    })
    const view = (await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body
    const approvedAt = new Date(view.approvedAt).getTime()
    // site policy (common practice): an approval expires if not implemented within 30 days
    expect(new Date(view.approvalExpiresAt).getTime()).toBe(approvedAt + 30 * DAY)

    ctx.clock.set(new Date(approvedAt + 30 * DAY - HOUR))
    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 0, toRevert: 0 })
    expect((await crRow(cr.id)).status).toBe('approved')

    ctx.clock.set(new Date(approvedAt + 30 * DAY + HOUR))
    await signInAll()
    const implement = firstItemImplementation(cr, PW)
    // refused even before the job has run
    expect(
      (await as.technician.post(`/api/change-requests/${cr.id}/implementations`, implement).expect(409)).body.error
        .code,
    ).toBe('INVALID_STATE')

    expect(await runDeadlines()).toEqual({ reminders: 0, flagged: 0, expired: 1, toRevert: 0 })
    const back = (await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body
    expect(back).toMatchObject({ status: 'submitted', approvalsHeld: 0, approvedAt: null })
    expect(back.signatures).toHaveLength(1)
    expect(back.signatures[0]).toMatchObject({
      meaning: 'approved',
      voided: true,
      voidReason: 'approval expired: not implemented within 30 days',
    })
    const [mail] = await mailsFor(`Approval of change request #${cr.id} expired`, ['engineer@fernhollow.example'])
    expect(recipients(mail)).toEqual(['engineer@fernhollow.example'])
    expect(mail.text).toContain(`${ctx.config.appUrl}/changes/${cr.id}`)

    expect(
      (await as.technician.post(`/api/change-requests/${cr.id}/implementations`, implement).expect(409)).body.error
        .code,
    ).toBe('INVALID_STATE')
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(780)

    // approved again, it is implemented
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
    await as.technician.post(`/api/change-requests/${cr.id}/implementations`, implement).expect(200)
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(790)
  })
})
