import { describe, expect, it } from 'vitest'
import { createChangeRequestJob } from '../../server/features/change-requests/change-requests.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import {
  approveChange,
  approvedTemporaryChange,
  buildActiveHeaterTrip,
  implementChange,
  submitChange,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Expired temporary changes (docs/change-requests.md#expired-temporary-changes): a temporary change on the device past
// its end is "expired, to be reverted" until a linked reversal is implemented with read-back; the handover and the
// change list show it, and the proposer and the site's shift supervisors are mailed daily. OSHA 1910.119(l) treats
// the return to the former values as a change of its own; the daily notice is common practice.
const ctx = useTestDb()
const HOUR = 3_600_000
const DAY = 24 * HOUR
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor', 'operator'] as const
const mailbox = useFakeSmtp(ctx)
const { as, signInAll } = useSignedIn(ctx, PEOPLE)

const runDeadlines = () => createChangeRequestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
const crew = () => ({ eng: as.engineer, approvers: [as.approver], tech: as.technician })

describe('expired temporary changes', () => {
  it('turns "expired, to be reverted" past its end, is shown and mailed daily, and is closed by the implemented reversal', async () => {
    const { site, area, limit } = await buildActiveHeaterTrip(crew())
    const expiresAt = new Date(ctx.clock.now().getTime() + 2 * DAY)
    const temp = await approvedTemporaryChange(
      crew(),
      { site, limit },
      {
        title: 'Temporary raise during catalyst dry-out',
        setpoint: 800,
        expiresAt,
      },
    )
    await implementChange(as.technician, temp)
    const get = async (id: number) => (await as.engineer.get(`/api/change-requests/${id}`).expect(200)).body
    expect(await get(temp.id)).toMatchObject({ temporaryState: 'open', reversals: [], reversesId: null })
    const handoverTemp = async () =>
      (
        (await as.supervisor.get(`/api/shift-handovers/state?areaId=${area.id}`).expect(200)).body.areas[0]
          .temporaryChanges as { id: number; expiredToRevert?: boolean }[]
      ).find((c) => c.id === temp.id)
    expect(await handoverTemp()).toMatchObject({ id: temp.id })
    expect((await handoverTemp())!.expiredToRevert).toBeUndefined()

    // past its end: still on the device, so it stays on the handover, marked, and the list finds it
    ctx.clock.set(new Date(expiresAt.getTime() + HOUR))
    await signInAll()
    expect(await get(temp.id)).toMatchObject({ temporaryState: 'expired' })
    expect(await handoverTemp()).toMatchObject({ id: temp.id, expiredToRevert: true })
    const listed = (await as.supervisor.get(`/api/change-requests?expiredTemporary=true&siteId=${site.id}`).expect(200))
      .body
    expect(listed.items.map((i: { id: number }) => i.id)).toEqual([temp.id])
    expect(listed.items[0].expiredToRevert).toBe(true)

    // mailed to the proposer and the shift supervisors of the site (the test seed holds one), once a day
    expect(await runDeadlines()).toMatchObject({ toRevert: 1 })
    const subject = `Temporary change #${temp.id} expired`
    const expected = ['engineer@fernhollow.example', 'supervisor@fernhollow.example']
    const first = await mailbox.mailsFor(subject, expected)
    expect(first.flatMap(recipients).sort()).toEqual(expected)
    expect(first[0].text).toContain(`${ctx.config.appUrl}/changes/${temp.id}`)
    expect(first[0].text).toContain('expired, to be reverted')

    ctx.clock.advance(2 * HOUR)
    expect(await runDeadlines()).toMatchObject({ toRevert: 0 })
    ctx.clock.advance(DAY)
    expect(await runDeadlines()).toMatchObject({ toRevert: 1 })
    await mailbox.deliver()
    await mailbox.smtp.waitFor(() => mailbox.startingWith(subject).length === 4)

    // the reversal: a safety engineer of the site, the temporary change's site, every limit of it restored
    await signInAll()
    const reversalBody = {
      siteId: site.id,
      type: 'permanent',
      title: `Reversal of temporary change #${temp.id}`,
      reversesId: temp.id,
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 780 } }],
    }
    await as.operator.post('/api/change-requests', reversalBody).expect(403)
    const other = (await as.engineer.get('/api/sites').expect(200)).body.items.find(
      (s: { id: number }) => s.id !== site.id,
    )
    expect(
      (await as.engineer.post('/api/change-requests', { ...reversalBody, siteId: other.id }).expect(400)).body.error
        .details.fields.reversesId,
    ).toBeDefined()
    const { limit: unrelated } = await buildActiveHeaterTrip(crew())
    const missing = (
      await as.engineer
        .post('/api/change-requests', {
          ...reversalBody,
          items: [{ kind: 'modify', limitId: unrelated.id, changes: { setpoint: 770 } }],
        })
        .expect(400)
    ).body.error
    expect(missing.details.fields.items[0]).toContain(limit.tag)
    await as.engineer
      .post('/api/change-requests', { ...reversalBody, type: 'temporary', expiresAt: expiresAt.toISOString() })
      .expect(400)
    await as.engineer.post('/api/change-requests', { ...reversalBody, reversesId: 2_000_000 }).expect(400)

    const reversal = await submitChange(as.engineer, reversalBody)
    expect(reversal).toMatchObject({ reversesId: temp.id })
    // one reversal at a time
    expect((await as.engineer.post('/api/change-requests', reversalBody).expect(409)).body.error.message).toContain(
      `#${reversal.id}`,
    )
    expect((await get(temp.id)).reversals).toEqual([{ id: reversal.id, status: 'submitted', title: reversal.title }])
    const approved = await approveChange([as.approver], reversal)
    // approved is not enough: it stays to be reverted until the device holds the former values
    expect(await get(temp.id)).toMatchObject({ temporaryState: 'expired' })
    await implementChange(as.technician, approved)

    expect(await get(temp.id)).toMatchObject({ temporaryState: 'reverted' })
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.setpoint).toBe(780)
    expect(await handoverTemp()).toBeUndefined()
    expect(
      (await as.supervisor.get(`/api/change-requests?expiredTemporary=true&siteId=${site.id}`).expect(200)).body.items,
    ).toEqual([])
    ctx.clock.advance(2 * DAY)
    expect(await runDeadlines()).toMatchObject({ toRevert: 0 })
    await signInAll()
    await as.engineer.post('/api/change-requests', reversalBody).expect(409)
  })

  it('refuses to put a temporary change on the device after its end', async () => {
    await signInAll()
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const expiresAt = new Date(ctx.clock.now().getTime() + 6 * HOUR)
    const temp = await approvedTemporaryChange(
      crew(),
      { site, limit },
      {
        title: 'Short raise for a start-up',
        setpoint: 790,
        expiresAt,
      },
    )
    ctx.clock.set(new Date(expiresAt.getTime() + 60_000))
    await signInAll()
    const body = (
      await as.technician
        .post(`/api/change-requests/${temp.id}/implementations`, {
          itemId: temp.items[0].id,
          readBack: { setpoint: 790 },
          password: DEMO_PASSWORD,
        })
        .expect(409)
    ).body
    expect(body.error.message).toContain('passed its end')
    // never on the device: nothing to revert
    expect((await as.engineer.get(`/api/change-requests/${temp.id}`).expect(200)).body.temporaryState).toBeNull()
    await as.engineer
      .post('/api/change-requests', {
        siteId: site.id,
        type: 'permanent',
        title: 'Reversal',
        reversesId: temp.id,
        items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 781 } }],
      })
      .expect(409)
  })
})
