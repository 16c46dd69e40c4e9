import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn, newAccount, siteIdByCode } from './helpers/agent.ts'
import { buildHeaterTrip, countActionEvents, countRows, passingHeaterTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// Who may record and sign a trip test (docs/trip-tests.md#who-signs), what a calibrator past due and a bad attachment do, and the
// lock after the performer signs. Every refusal is checked to write nothing.

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const TECH2_PW = 'copper kettle orchard 1987' // an account made in the test: the password policy refuses the demo password
let app: Express
const a = {} as Record<
  'eng' | 'approver' | 'approver2' | 'tech' | 'tech2' | 'sup' | 'operator' | 'admin' | 'manager' | 'auditor',
  ApiAgent
>
let limitId = 0
let silLimitId = 0

/** Row counts of everything recording or signing a trip test writes (sign-ins excluded). */
async function written() {
  const count = async (table: 'trip_test' | 'signature' | 'attachment' | 'limit_degradation' | 'mail_outbox') =>
    countRows(ctx.db, table)
  const audit = await countActionEvents(ctx.db)
  const tests = await ctx.db.selectFrom('trip_test').select(['id', 'status', 'content_hash']).orderBy('id').execute()
  return {
    tests: await count('trip_test'),
    signatures: await count('signature'),
    attachments: await count('attachment'),
    degradations: await count('limit_degradation'),
    mails: await count('mail_outbox'),
    auditEvents: audit,
    states: tests,
  }
}

/** A passing full test of the type K heater trip (780 °C, tolerance ±6 °C = 0.5 % of 0–1200 °C, docs/trip-tests.md#judging-a-test). */
const body = (over: Record<string, unknown> = {}) => passingHeaterTest(limitId, over)

beforeAll(async () => {
  ctx.clock.set('2026-04-14T09:00:00Z')
  app = createApp(ctx)
  const account: Record<string, string> = { eng: 'engineer', sup: 'supervisor', tech: 'technician' }
  for (const who of ['eng', 'approver', 'approver2', 'tech', 'sup', 'operator', 'admin', 'manager', 'auditor'] as const)
    a[who] = await signedIn(app, account[who] ?? who)
  const fhr = await siteIdByCode(a.admin, 'FHR')
  a.tech2 = (
    await newAccount(app, a.admin, {
      email: 'tech2@fernhollow.example',
      displayName: 'Rune Calder',
      password: TECH2_PW,
      roles: [{ siteId: fhr, role: 'technician' }],
    })
  ).agent

  const { limit } = await buildHeaterTrip(a.eng)
  await activateLimit({ eng: a.eng, approver: a.approver, tech: a.tech }, limit)
  limitId = limit.id
  const sil = (await buildHeaterTrip(a.eng, { sil: 2 })).limit
  await activateLimit({ eng: a.eng, approver: a.approver, approver2: a.approver2, tech: a.tech }, sil)
  silLimitId = sil.id
})

describe('recording: only technicians (docs/trip-tests.md#who-signs)', () => {
  it('answers 403 to every other role and writes nothing', async () => {
    const before = await written()
    for (const who of ['eng', 'approver', 'sup', 'operator', 'admin', 'manager', 'auditor'] as const) {
      const res = await a[who].post('/api/trip-tests', body()).expect(403)
      expect(res.body.error.code, who).toBe('FORBIDDEN')
    }
    expect(await written()).toEqual(before)
    const ok = await a.tech.created('/api/trip-tests', body())
    expect(ok).toMatchObject({
      asFoundResult: 'in_tolerance',
      asLeftResult: 'in_tolerance',
      passed: true,
      status: 'recorded',
      recordedBy: 'Tomas Quillfeather',
    })
  })

  it("refuses a calibrator past its calibration due date on the test day, in the site's time zone, and writes nothing", async () => {
    const before = await written()
    const past = await a.tech.post('/api/trip-tests', body({ calibratorDueDate: '2026-04-13' })).expect(400)
    expect(past.body.error.details.fields.calibratorDueDate[0]).toContain('past its calibration due date')
    // 23:30 UTC on 14 April is 01:30 on 15 April in Europe/Berlin (CEST, UTC+2): a calibrator due on the 14th is past due
    const late = await a.tech
      .post('/api/trip-tests', body({ performedAt: '2026-04-13T23:30:00Z', calibratorDueDate: '2026-04-13' }))
      .expect(400)
    expect(late.body.error.details.fields.calibratorDueDate).toHaveLength(1)
    // a calibrator without its due date is refused as well
    const missing = await a.tech.post('/api/trip-tests', body({ calibratorDueDate: null })).expect(400)
    expect(missing.body.error.details.fields.calibratorDueDate).toHaveLength(1)
    expect(await written()).toEqual(before)
    // due on the test day itself is still usable (the day of the test is the last valid day)
    await a.tech.post('/api/trip-tests', body({ calibratorDueDate: '2026-04-14' })).expect(201)
  })

  it('refuses a test in the future and a reference-gauge test of a thermocouple', async () => {
    const before = await written()
    const future = await a.tech.post('/api/trip-tests', body({ performedAt: '2026-04-14T12:00:00Z' })).expect(400)
    expect(future.body.error.details.fields.performedAt).toHaveLength(1)
    const gauge = await a.tech
      .post('/api/trip-tests', body({ method: 'reference_gauge', calibratorId: '', calibratorDueDate: null }))
      .expect(400)
    expect(gauge.body.error.details.fields.method).toHaveLength(1)
    const lowered = await a.tech
      .post('/api/trip-tests', body({ method: 'setpoint_lowered', injectionPoint: null }))
      .expect(400)
    expect(lowered.body.error.details.fields.setpointRestoredReadBack).toHaveLength(1)
    expect(await written()).toEqual(before)
  })
})

describe('signatures (docs/trip-tests.md#who-signs: performer = recorder; witness never the performer; return to service; acceptance by operations)', () => {
  it('keeps each meaning to its roles and people, writing nothing on a refusal', async () => {
    const t = await a.tech.created('/api/trip-tests', body())
    const sign = (who: keyof typeof a, meaning: string, password = who === 'tech2' ? TECH2_PW : PW) =>
      a[who].post(`/api/trip-tests/${t.id}/signatures`, { meaning, password })

    let before = await written()
    // performed: only the technician who recorded it
    await sign('tech2', 'performed').expect(403)
    for (const who of ['eng', 'sup', 'operator', 'approver', 'admin'] as const) await sign(who, 'performed').expect(403)
    expect(await written()).toEqual(before)

    // a wrong password: 403 SIGNATURE_INVALID, only the failed attempt is audited
    const wrong = await sign('tech', 'performed', 'not-my-password').expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    const afterWrong = await written()
    expect({ ...afterWrong, auditEvents: before.auditEvents }).toEqual(before)

    await sign('tech', 'performed').expect(200)
    before = await written()
    // witnessed: never the performer; operators, admins, managers and auditors do not witness
    const own = await sign('tech', 'witnessed').expect(403)
    expect(own.body.error.message).toContain('own test')
    for (const who of ['operator', 'admin', 'manager', 'auditor'] as const) await sign(who, 'witnessed').expect(403)
    // accepted: shift supervisors and operators only
    for (const who of ['tech', 'tech2', 'eng', 'approver', 'admin', 'manager'] as const)
      await sign(who, 'accepted').expect(403)
    expect(await written()).toEqual(before)

    const witnessed = (await sign('tech2', 'witnessed').expect(200)).body
    expect(witnessed.signatures.map((s: { meaning: string }) => s.meaning)).toEqual(['performed', 'witnessed'])
    // operations accept only after a technician signed that forces, jumpers and bypasses are removed
    const early = await sign('operator', 'accepted').expect(409)
    expect(early.body.error.message).toContain('return-to-service')
    for (const who of ['operator', 'eng', 'sup'] as const) await sign(who, 'returned_to_service').expect(403)
    await sign('tech', 'returned_to_service').expect(200)
    const accepted = (await sign('operator', 'accepted').expect(200)).body
    expect(accepted.status).toBe('completed')
    expect(accepted.signatures.every((s: { matchesContent: boolean }) => s.matchesContent)).toBe(true)
    // each meaning once
    expect((await sign('sup', 'accepted').expect(409)).body.error.code).toBe('INVALID_STATE')
  })

  it('asks for a witness on a SIL-rated limit: performed and accepted leave it signed, the witness completes it', async () => {
    const t = await a.tech.created('/api/trip-tests', body({ limitId: silLimitId }))
    expect(t.witnessRequired).toBe(true)
    await a.tech.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
    await a.tech
      .post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'returned_to_service', password: PW })
      .expect(200)
    const accepted = (
      await a.sup.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'accepted', password: PW }).expect(200)
    ).body
    expect(accepted.status).toBe('signed')
    const done = (
      await a.eng.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'witnessed', password: PW }).expect(200)
    ).body
    expect(done.status).toBe('completed')
    // without a SIL the site policy (sil_only) asks for none
    expect(
      (await a.tech.get(`/api/trip-tests/${(await a.tech.created('/api/trip-tests', body())).id}`).expect(200)).body
        .witnessRequired,
    ).toBe(false)
  })
})

describe('editing: by its recorder until the performer signs', () => {
  it('lets the recorder correct an unsigned record, refuses others, and locks it after signing', async () => {
    const t = await a.tech.created('/api/trip-tests', body({ asFound: 790 }))
    expect(t.asFoundResult).toBe('out_dangerous')
    const before = await written()
    await a.tech2.put(`/api/trip-tests/${t.id}`, body({ asFound: 781 })).expect(403)
    await a.eng.put(`/api/trip-tests/${t.id}`, body({ asFound: 781 })).expect(403)
    await a.tech.put(`/api/trip-tests/${t.id}`, body({ limitId: silLimitId, asFound: 781 })).expect(400)
    expect(await written()).toEqual(before)

    const fixed = (await a.tech.put(`/api/trip-tests/${t.id}`, body({ asFound: 786 })).expect(200)).body
    // 786 − 780 = 6 = the tolerance: the boundary counts as in tolerance
    expect(fixed).toMatchObject({ asFound: 786, asFoundResult: 'in_tolerance', passed: true })
    expect(fixed.contentHash).not.toBe(t.contentHash)

    await a.tech.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
    const locked = await written()
    const res = await a.tech.put(`/api/trip-tests/${t.id}`, body({ asFound: 780 })).expect(409)
    expect(res.body.error.code).toBe('INVALID_STATE')
    expect(await written()).toEqual(locked)
  })
})

describe('attachments: PDF, PNG or JPEG up to 10 MB, checked by content', () => {
  const PNG = Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    Buffer.from('calibrator photo'),
  ])

  it('stores a real PNG, refuses a text file named .pdf and a file over 10 MB, and writes nothing then', async () => {
    const t = await a.tech.created('/api/trip-tests', body())
    const url = `/api/trip-tests/${t.id}/attachments`
    const upload = (agent: ApiAgent, buf: Buffer, name: string) => agent.upload(url, {}, { name, content: buf })

    const before = await written()
    const fake = await upload(
      a.tech,
      Buffer.from('This is a text file, not a calibrator report.\n'),
      'report.pdf',
    ).expect(400)
    expect(fake.body.error.details.fields.file).toHaveLength(1)
    const big = Buffer.alloc(10 * 1024 * 1024 + 1, 0x20)
    big.write('%PDF-1.7\n', 0, 'latin1')
    const tooBig = await upload(a.tech, big, 'huge.pdf')
    expect(tooBig.status).toBe(413)
    expect(tooBig.body.error.code).toBe('VALIDATION_FAILED')
    await upload(a.eng, PNG, 'photo.png').expect(403)
    expect(await written()).toEqual(before)

    const stored = (await upload(a.tech, PNG, 'photo.png').expect(201)).body
    expect(stored).toMatchObject({ fileName: 'photo.png', contentType: 'image/png', sizeBytes: PNG.length })
    const back = await a.auditor.getBytes(`${url}/${stored.id}`).expect(200)
    expect(Buffer.compare(back.body as Buffer, PNG)).toBe(0)
    expect((await a.tech.get(`/api/trip-tests/${t.id}`).expect(200)).body.attachments).toHaveLength(1)
  })
})
