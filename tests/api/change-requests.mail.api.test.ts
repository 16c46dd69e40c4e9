import type { Express } from 'express'
import type { ParsedMail } from 'mailparser'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn, signedInAs } from './helpers/agent.ts'
import {
  buildHeaterTrip,
  submitChange,
  firstItemImplementation,
  CHANGE_PEOPLE,
  dualRoleApprover,
} from './helpers/factories.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const mailbox = useFakeSmtp(ctx)
let app: Express
let eng: ApiAgent
let approver: ApiAgent
let approver2: ApiAgent
let tech: ApiAgent

beforeAll(async () => {
  app = createApp(ctx)
  ;({ eng, approver, approver2, tech } = await signedInAs(app, CHANGE_PEOPLE))
})

const addr = (who: string) => `${who}@fernhollow.example`

/**
 * Delivers the outbox through the fake SMTP server (the production path), waits for the mail to each expected
 * recipient, and checks that exactly those received the subject; answers the mails.
 */
async function received(subjectStart: string, expected: string[]) {
  const mails = await mailbox.mailsFor(subjectStart, expected.map(addr))
  expect(mails.flatMap(recipients).sort()).toEqual(expected.map(addr).sort())
  return mails
}

/** Plain text and HTML, both with the link to the request's page. */
function expectLinkToRequest(m: ParsedMail, id: number) {
  const url = `${ctx.config.appUrl}/changes/${id}`
  expect(m.text).toContain(url)
  expect(m.html).toEqual(expect.stringContaining(`href="${url}"`))
}

describe('change request mail, read from the SMTP server', () => {
  it("submitted → the site's approvers; approved → proposer; implemented → proposer and the approvers", async () => {
    const { site, limit } = await buildHeaterTrip(eng, { sil: 2 })
    const cr = await submitChange(eng, {
      siteId: site.id,
      title: 'SIL 2 heater trip in service',
      items: [{ kind: 'create', limitId: limit.id }],
    })

    const submitted = await received(`Change request #${cr.id} waits for your approval`, ['approver', 'approver2'])
    for (const m of submitted) {
      expectLinkToRequest(m, cr.id)
      expect(m.text).toContain('Selma Rookwood submitted')
      expect(m.text).toContain('needs 2 approval(s)')
    }

    await approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
    // one of two approvals: nobody is told it is approved yet
    await mailbox.deliver()
    expect(mailbox.startingWith(`Change request #${cr.id} approved`)).toEqual([])
    await approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
    const [approved] = await received(`Change request #${cr.id} approved: SIL 2 heater trip in service`, ['engineer'])
    expectLinkToRequest(approved, cr.id)

    await tech.post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(cr, PW)).expect(200)
    const implemented = await received(`Change request #${cr.id} implemented`, ['engineer', 'approver', 'approver2'])
    for (const m of implemented) {
      expectLinkToRequest(m, cr.id)
      expect(m.text).toContain('Tomas Quillfeather implemented')
    }
  })

  it('rejected → proposer, with the reason in both bodies', async () => {
    const { site, limit } = await buildHeaterTrip(eng)
    const cr = await submitChange(eng, {
      siteId: site.id,
      title: 'Trip at 780',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    await received(`Change request #${cr.id} waits for your approval`, ['approver', 'approver2'])
    await approver
      .post(`/api/change-requests/${cr.id}/rejections`, {
        password: PW,
        comment: 'Setpoint leaves < 5 % margin to the tube design temperature',
      })
      .expect(200)
    const [rejected] = await received(`Change request #${cr.id} rejected`, ['engineer'])
    expectLinkToRequest(rejected, cr.id)
    expect(rejected.text).toContain('Reason: Setpoint leaves < 5 % margin to the tube design temperature')
    expect(rejected.html).toEqual(
      expect.stringContaining('Reason: Setpoint leaves &lt; 5 % margin to the tube design temperature'),
    )
    expect(rejected.text).toContain('Arlo Pennick rejected')
  })

  it('a proposer who is also an approver is not asked to approve their own request', async () => {
    const dual = (await dualRoleApprover(app, await signedIn(app, 'admin'))).agent

    const { site, limit } = await buildHeaterTrip(dual)
    const cr = await submitChange(dual, {
      siteId: site.id,
      title: 'Proposed by an approver',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    await received(`Change request #${cr.id} waits for your approval`, ['approver', 'approver2'])
  })
})
