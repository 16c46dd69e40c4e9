import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { useSignedIn } from './helpers/agent.ts'
import {
  submitAndApprove,
  type ChangeCrew,
  buildActiveHeaterTrip,
  buildHeaterTrip,
  carryOutChange,
  implementChange,
  readBackOf,
  rowCounts,
  submitChange,
} from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PSSR = { reference: 'PSSR-2026-412', findings: 'none', readyForService: true }

const { as } = useSignedIn(ctx, ['engineer', 'approver', 'technician'])
const crew = (): ChangeCrew => ({ eng: as.engineer, approvers: [as.approver], tech: as.technician })

const limitOf = async (id: number) => (await as.engineer.get(`/api/limits/${id}`).expect(200)).body
const warningCodes = (w: { warnings: { code: string }[] }) => w.warnings.map((x) => x.code)

describe('a request applied to a row that changed meanwhile (one winner, nothing half-applied)', () => {
  it('two approved requests on the same active limit: the first applies, the second answers 409 CONFLICT and writes nothing', async () => {
    const { site, limit } = await buildActiveHeaterTrip(crew())
    const first = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Raise to 790',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 790 } }],
    })
    const second = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Raise to 800',
      items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 800 } }],
    })
    expect(second.status).toBe('approved')

    await implementChange(as.technician, first)
    const applied = await limitOf(limit.id)
    expect(applied.setpoint).toBe(790)
    expect((await as.engineer.get(`/api/change-requests/${second.id}`).expect(200)).body.items[0]).toMatchObject({
      stale: true,
      baseRevision: limit.revision,
      currentRevision: applied.revision,
    })

    const before = await rowCounts(ctx.db)
    const res = await as.technician
      .post(`/api/change-requests/${second.id}/implementations`, {
        itemId: second.items[0].id,
        readBack: { setpoint: 800 },
        password: PW,
      })
      .expect(409)
    expect(res.body.error.code).toBe('CONFLICT')
    expect(await rowCounts(ctx.db)).toEqual(before)
    expect(await limitOf(limit.id)).toMatchObject({ setpoint: 790, revision: applied.revision })
    const after = (await as.engineer.get(`/api/change-requests/${second.id}`).expect(200)).body
    expect(after.status).toBe('approved')
    expect(after.signatures.map((s: { meaning: string }) => s.meaning)).toEqual(['approved'])
  })

  it('a multi-item request whose second item is stale applies neither item', async () => {
    const one = await buildActiveHeaterTrip(crew())
    const two = await buildActiveHeaterTrip(crew())
    const site = one.site
    const both = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Raise both heater trips',
      items: [
        { kind: 'modify', limitId: one.limit.id, changes: { setpoint: 790 } },
        { kind: 'modify', limitId: two.limit.id, changes: { setpoint: 790 } },
      ],
    })
    // meanwhile another approved request changes the second limit
    await carryOutChange(crew(), {
      siteId: site.id,
      title: 'Raise the second only',
      items: [{ kind: 'modify', limitId: two.limit.id, changes: { setpoint: 795 } }],
    })

    const before = await rowCounts(ctx.db)
    for (const item of both.items) {
      const res = await as.technician
        .post(`/api/change-requests/${both.id}/implementations`, {
          itemId: item.id,
          readBack: readBackOf(item),
          password: PW,
        })
        .expect(409)
      expect(res.body.error.code).toBe('CONFLICT')
    }
    expect(await rowCounts(ctx.db)).toEqual(before)
    expect((await limitOf(one.limit.id)).setpoint).toBe(780)
    expect((await limitOf(two.limit.id)).setpoint).toBe(795)
    const after = (await as.engineer.get(`/api/change-requests/${both.id}`).expect(200)).body
    expect(after.status).toBe('approved')
    expect(
      after.items.map((i: { implementedAt: string | null; stale: boolean }) => [i.implementedAt, i.stale]),
    ).toEqual([
      [null, false],
      [null, true],
    ])
  })

  it('a baseline of new limits implemented in bulk with one stale item activates none', async () => {
    const a = await buildHeaterTrip(as.engineer)
    const b = await buildHeaterTrip(as.engineer)
    const baseline = await submitAndApprove(as.engineer, [as.approver], {
      siteId: a.site.id,
      title: 'Baseline of two trips',
      items: [
        { kind: 'create', limitId: a.limit.id },
        { kind: 'create', limitId: b.limit.id },
      ],
    })
    // the second draft is edited in the register after the approval
    await as.engineer.patch(`/api/limits/${b.limit.id}`, { setpoint: 785 }).expect(200)
    const before = await rowCounts(ctx.db)
    const res = await as.technician
      .post(`/api/change-requests/${baseline.id}/implementations`, {
        allItems: true,
        deviceListConfirmed: true,
        password: PW,
      })
      .expect(409)
    expect(res.body.error.code).toBe('CONFLICT')
    expect(await rowCounts(ctx.db)).toEqual(before)
    expect((await limitOf(a.limit.id)).status).toBe('proposed')
    expect((await limitOf(b.limit.id)).status).toBe('proposed')
  })
})

describe('an instrument behind an active limit changes only through a change request (OSHA 1910.119(l))', () => {
  it("refuses a direct edit, and re-ranges through approval and implementation with read-back, recomputing the limit's window", async () => {
    const { site, inst, limit } = await buildHeaterTrip(as.engineer)
    // while the limit is a draft the instrument is edited directly: a design high beyond the range warns
    await as.engineer.patch(`/api/instruments/${inst.id}`, { designHigh: 1250 }).expect(200)
    expect(warningCodes((await limitOf(limit.id)).operatingWindow)).toContain('DESIGN_LIMIT_OUTSIDE_RANGE')
    await carryOutChange(crew(), {
      siteId: site.id,
      title: 'In service',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    const instBefore = (await as.engineer.get(`/api/instruments/${inst.id}`).expect(200)).body

    const direct = await as.engineer.patch(`/api/instruments/${inst.id}`, { rangeHigh: 1300 }).expect(409)
    expect(direct.body.error.code).toBe('INVALID_STATE')
    expect((await as.engineer.get(`/api/instruments/${inst.id}`).expect(200)).body).toMatchObject({
      rangeHigh: 1200,
      revision: instBefore.revision,
    })

    const cr = await submitChange(as.engineer, {
      siteId: site.id,
      title: 'Re-range TT to 0–1300 °C',
      items: [{ kind: 'instrument', instrumentId: inst.id, changes: { rangeHigh: 1300 } }],
    })
    const item = cr.items[0]
    expect(item).toMatchObject({
      kind: 'instrument',
      instrumentId: inst.id,
      targetTag: inst.tag,
      unit: '°C',
      changes: { rangeHigh: { from: 1200, to: 1300 } },
      deviceFields: ['rangeHigh'],
    })
    expect(warningCodes(item.windowBefore)).toContain('DESIGN_LIMIT_OUTSIDE_RANGE')
    expect(warningCodes(item.windowAfter)).not.toContain('DESIGN_LIMIT_OUTSIDE_RANGE')
    await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)

    const wrong = await as.technician
      .post(`/api/change-requests/${cr.id}/implementations`, {
        itemId: item.id,
        readBack: { rangeHigh: 1200 },
        password: PW,
      })
      .expect(422)
    expect(wrong.body.error.details.fields['readBack.rangeHigh'][0]).toContain('1300')
    expect((await as.engineer.get(`/api/instruments/${inst.id}`).expect(200)).body.rangeHigh).toBe(1200)

    expect(
      (
        await as.technician
          .post(`/api/change-requests/${cr.id}/implementations`, {
            itemId: item.id,
            readBack: { rangeHigh: 1300 },
            password: PW,
          })
          .expect(200)
      ).body.status,
    ).toBe('implemented')
    expect((await as.engineer.get(`/api/instruments/${inst.id}`).expect(200)).body).toMatchObject({
      rangeHigh: 1300,
      revision: instBefore.revision + 1,
    })
    const rev = await ctx.db
      .selectFrom('instrument_revision')
      .selectAll()
      .where('instrument_id', '=', inst.id)
      .orderBy('revision', 'desc')
      .executeTakeFirstOrThrow()
    expect(rev).toMatchObject({ revision: instBefore.revision + 1, change_request_id: cr.id })
    expect(warningCodes((await limitOf(limit.id)).operatingWindow)).not.toContain('DESIGN_LIMIT_OUTSIDE_RANGE')
  })
})

describe('bad input is refused and writes nothing', () => {
  let site: { id: number }
  let active: { id: number; revision: number }

  beforeAll(async () => {
    const built = await buildActiveHeaterTrip(crew())
    site = built.site
    active = built.limit
  })

  /** A new request with one item that modifies the active limit (or `opts.limitId`) by `changes`. */
  const propose = (title: string, changes: Record<string, unknown>, opts: { type?: string; limitId?: number } = {}) =>
    as.engineer.post('/api/change-requests', {
      siteId: site.id,
      type: opts.type ?? 'permanent',
      title,
      items: [{ kind: 'modify', limitId: opts.limitId ?? active.id, changes }],
    })

  async function refused(
    status: number,
    call: () => Promise<{ status: number; body: { error: { code: string; details?: Record<string, unknown> } } }>,
  ) {
    const before = await rowCounts(ctx.db)
    const res = await call()
    expect(res.status, JSON.stringify(res.body)).toBe(status)
    expect(await rowCounts(ctx.db)).toEqual(before)
    return res.body.error
  }

  it('a temporary change without an expiry: 400 with a field error', async () => {
    const err = await refused(400, () => propose('Temporary raise', { setpoint: 790 }, { type: 'temporary' }))
    expect(err.code).toBe('VALIDATION_FAILED')
    expect(err.details!.fields).toHaveProperty('expiresAt')
  })

  it("an item that changes nothing, or a field that is not the limit's to change: 400", async () => {
    const same = await refused(400, () => propose('No-op', { setpoint: 780 }))
    expect((same.details!.fields as Record<string, string[]>).items[0]).toContain('changes nothing')
    const status = await refused(400, () => propose('Sneaky', { status: 'retired' }))
    expect((status.details!.fields as Record<string, string[]>).items[0]).toContain('status')
  })

  it('a modify that breaks the operating window: 422 with the window result, on create and on edit', async () => {
    // API RP 584 operating window: a high trip lies above the normal range (normal high 650)
    const err = await refused(422, () => propose('Too low', { setpoint: 640 }))
    expect(err.code).toBe('UNPROCESSABLE')
    expect((err.details!.operatingWindow as { errors: { code: string }[] }).errors.map((e) => e.code)).toContain(
      'SETPOINT_NOT_BEYOND_NORMAL',
    )

    const draft = (await propose('Fine at first', { setpoint: 790 }).expect(201)).body
    await refused(422, () =>
      as.engineer.patch(`/api/change-requests/${draft.id}`, {
        items: [{ kind: 'modify', limitId: active.id, changes: { setpoint: 1250 } }],
      }),
    )
    expect((await as.engineer.get(`/api/change-requests/${draft.id}`).expect(200)).body).toMatchObject({
      version: draft.version,
      contentHash: draft.contentHash,
      items: [{ changes: { setpoint: { from: 780, to: 790 } } }],
    })
  })

  it('a modify of a proposed limit: 409 (a draft is edited in the register)', async () => {
    const { limit } = await buildHeaterTrip(as.engineer)
    const err = await refused(409, () => propose('Modify a draft', { setpoint: 790 }, { limitId: limit.id }))
    expect(err.code).toBe('INVALID_STATE')
  })

  it('closure before implementation: 409; closure with the checklist incomplete: 400', async () => {
    const cr = await submitAndApprove(as.engineer, [as.approver], {
      siteId: site.id,
      title: 'Close too early',
      items: [{ kind: 'modify', limitId: active.id, changes: { deadband: 6 } }],
    })
    const early = await refused(409, () =>
      as.engineer.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }),
    )
    expect(early.code).toBe('INVALID_STATE')

    await implementChange(as.technician, cr)
    for (const c of IMPACT_CHECKLIST.slice(0, -1))
      await as.engineer.put(`/api/change-requests/${cr.id}/checklist/${c.item}`, { done: true }).expect(200)
    // OSHA 1910.119(l)(2) and (3): procedures updated and people informed before start-up
    const incomplete = await refused(400, () =>
      as.engineer.post(`/api/change-requests/${cr.id}/closure`, { password: PW, pssr: PSSR }),
    )
    expect(incomplete.code).toBe('VALIDATION_FAILED')
    expect((incomplete.details!.fields as Record<string, string[]>).checklist).toEqual([
      `Tick "${IMPACT_CHECKLIST[IMPACT_CHECKLIST.length - 1].label}" first`,
    ])
    // the PSSR must confirm readiness
    const notReady = await refused(400, () =>
      as.engineer.post(`/api/change-requests/${cr.id}/closure`, {
        password: PW,
        pssr: { ...PSSR, readyForService: false },
      }),
    )
    expect(notReady.details!.fields).toHaveProperty('pssr.readyForService')
    expect((await as.engineer.get(`/api/change-requests/${cr.id}`).expect(200)).body.status).toBe('implemented')
  })
})
