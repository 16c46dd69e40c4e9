import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { approveChange, buildActiveHeaterTrip, implementChange, submitChange } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Reconciliation from an uploaded configuration export (docs/reconciliation.md): one finding per kind, signed
// acceptance, resolution by a linked change request, and a finding that reopens after it was closed. Every fixture
// value below is written by hand; the register holds each fixture trip at 780 °C with a 5 °C deadband, latching.
const ctx = useTestDb()

let eng: ApiAgent
let manager: ApiAgent
let operator: ApiAgent
let crew: { eng: ApiAgent; approvers: ApiAgent[]; tech: ApiAgent }
let siteId: number
let sourceId: number
const tags: Record<'changed' | 'bypassed' | 'disabled' | 'missing', string> = {
  changed: '',
  bypassed: '',
  disabled: '',
  missing: '',
}
const limitIds: Record<string, number> = {}
const GHOST = 'TSHH-9999-NOT-IN-REGISTER'

interface FindingDto {
  id: number
  kind: string
  tag: string
  attribute: string
  state: string
  registerValue: string | null
  deviceValue: string | null
  unit: string | null
  version: number
  reopenCount: number
  resolution: string | null
  changeRequestId: number | null
  acceptReason: string | null
  signatures: { meaning: string; matchesContent: boolean }[]
}

/** An export in the column layout of an invented control system: one row per tag and attribute. */
function exportCsv(changedSetpoint: string) {
  return [
    'Tag,Attribute,Value,Unit',
    `${tags.changed},SP,${changedSetpoint},°C`,
    `${tags.changed},DB,5,°C`,
    // 780 °C written in °F: 780 × 1.8 + 32 = 1436 °F exactly (NIST SP 811, B.9: t/°F = 1.8 t/°C + 32); no finding
    `${tags.bypassed},setpoint,1436,°F`,
    `${tags.bypassed},bypass,1,`,
    `${tags.disabled},SP,780.0,°C`,
    `${tags.disabled},enabled,no,`,
    `${GHOST},SP,500,°C`,
  ].join('\n')
}

function upload(a: ApiAgent, csv: string, fileName = 'crude-dcs-export.csv') {
  return a.upload(`/api/reconciliation-sources/${sourceId}/exports`, {}, { name: fileName, content: csv })
}

async function findingsOf(kind?: string): Promise<FindingDto[]> {
  const q = `sourceId=${sourceId}${kind ? `&kind=${kind}` : ''}&state=open&state=acknowledged&state=resolved&state=accepted`
  return (await eng.get(`/api/findings?${q}`).expect(200)).body.items
}
const one = async (kind: string, tag: string) => (await findingsOf(kind)).find((f) => f.tag === tag)!

beforeAll(async () => {
  const app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  manager = await signedIn(app, 'manager')
  operator = await signedIn(app, 'operator')
  crew = {
    eng,
    approvers: [await signedIn(app, 'approver'), await signedIn(app, 'approver2')],
    tech: await signedIn(app, 'technician'),
  }
  const built: Awaited<ReturnType<typeof buildActiveHeaterTrip>>[] = []
  for (let i = 0; i < 4; i++) built.push(await buildActiveHeaterTrip(crew))
  siteId = built[0].site.id
  ;(['changed', 'bypassed', 'disabled', 'missing'] as const).forEach((k, i) => {
    tags[k] = built[i].limit.tag
    limitIds[k] = built[i].limit.id
  })
  const source = await eng.created('/api/reconciliation-sources', {
    siteId,
    kind: 'export',
    name: 'Crude unit control system',
    areaIds: [built[0].area.id],
  })
  sourceId = source.id
}, 120_000)

describe('an uploaded export', () => {
  it('is refused to an operator, and to a file that is not an export', async () => {
    await upload(operator, exportCsv('790'), 'x.csv').expect(403)
    const bad = await upload(eng, 'just one line without the columns', 'notes.csv')
    expect(bad.status).toBeGreaterThanOrEqual(400)
    expect(bad.status).toBeLessThan(500)
    expect((await findingsOf()).length).toBe(0)
  })

  it('yields one finding of each kind, and none where the values agree', async () => {
    const run = (await upload(eng, exportCsv('790')).expect(201)).body
    expect(run).toMatchObject({ outcome: 'completed', trigger: 'upload', rowsRead: 7, rowsIgnored: 0 })
    const all = await findingsOf()
    expect(all.map((f) => [f.kind, f.tag, f.attribute]).sort()).toEqual(
      [
        ['changed_without_moc', tags.changed, 'setpoint'],
        ['bypassed_without_authorization', tags.bypassed, 'bypassed'],
        ['disabled', tags.disabled, 'enabled'],
        ['not_in_register', GHOST, expect.any(String)],
        ['missing_on_device', tags.missing, expect.any(String)],
      ].sort((a, b) => String(a[0]).localeCompare(String(b[0]))),
    )
    expect(all.every((f) => f.state === 'open')).toBe(true)
    expect(await one('changed_without_moc', tags.changed)).toMatchObject({
      registerValue: '780',
      deviceValue: '790',
      unit: '°C',
    })
    expect(run.findingsNew).toBe(5)
    // the limit page: last reconciliation of a matched and of a differing limit
    const differs = (await eng.get(`/api/limits/${limitIds.changed}/reconciliations`).expect(200)).body.items
    expect(differs).toMatchObject([{ sourceId, sourceName: 'Crude unit control system', matched: false }])
    expect(differs[0].differences).toEqual(['setpoint: changed_without_moc'])
  })

  it('the same export again creates nothing new', async () => {
    const run = (await upload(eng, exportCsv('790')).expect(201)).body
    expect(run).toMatchObject({ findingsNew: 0, findingsReopened: 0, findingsResolved: 0, differences: 5 })
    expect(await findingsOf()).toHaveLength(5)
  })
})

/** The reason the acceptance tests sign. */
const RETIRED = 'Alarm retired in the rationalization'

/** `who` accepts the finding at `version` with a signed reason; `over` changes the reason or the password. */
function accept(who: ApiAgent, f: { id: number }, version: number, over: { reason?: string; password?: string } = {}) {
  return who.post(`/api/findings/${f.id}/acceptance`, { version, reason: RETIRED, password: DEMO_PASSWORD, ...over })
}

describe('acceptance with a signed reason', () => {
  it('needs an acknowledgement first, the right role, a reason and the signer’s password', async () => {
    const f = await one('disabled', tags.disabled)
    // not acknowledged yet: 409
    await accept(manager, f, f.version).expect(409)
    await operator.post(`/api/findings/${f.id}/acknowledgement`, { version: f.version }).expect(403)
    const acked = (await eng.post(`/api/findings/${f.id}/acknowledgement`, { version: f.version }).expect(200)).body
    expect(acked).toMatchObject({ state: 'acknowledged', acknowledgedBy: expect.any(String) })
    await accept(operator, f, acked.version).expect(403)
    const short = await accept(manager, f, acked.version, { reason: 'ok' }).expect(400)
    expect(short.body.error.details.fields.reason).toBeDefined()
    const wrong = await accept(manager, f, acked.version, { password: 'not-the-password' }).expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    expect((await eng.get(`/api/findings/${f.id}`).expect(200)).body.state).toBe('acknowledged')

    const accepted = (await accept(manager, f, acked.version).expect(200)).body
    expect(accepted).toMatchObject({ state: 'accepted', resolution: 'accepted', acceptReason: RETIRED })
    expect(accepted.signatures).toMatchObject([{ meaning: 'accepted', matchesContent: true }])
    // closed: nothing more is offered
    expect(accepted.actions.acknowledge.allowed).toBe(false)
    expect(accepted.actions.accept.allowed).toBe(false)
  })

  it('stays accepted while the source holds the value it was accepted with', async () => {
    await upload(eng, exportCsv('790')).expect(201)
    expect((await one('disabled', tags.disabled)).state).toBe('accepted')
  })
})

describe('resolution by a linked change request, and reopening after closure', () => {
  it('a change request that does not touch the limit cannot be linked', async () => {
    const f = await one('changed_without_moc', tags.changed)
    const acked = (await eng.post(`/api/findings/${f.id}/acknowledgement`, { version: f.version }).expect(200)).body
    const other = await submitChange(eng, {
      siteId,
      title: 'Raise the other trip',
      items: [{ kind: 'modify', limitId: limitIds.missing, changes: { setpoint: 785 } }],
    })
    const res = await eng
      .post(`/api/findings/${f.id}/change-request`, { version: acked.version, changeRequestId: other.id })
      .expect(422)
    expect(res.body.error.message).toContain(tags.changed)
  })

  it('is resolved by the first run after the register follows the plant through its change request', async () => {
    let f = await one('changed_without_moc', tags.changed)
    const cr = await submitChange(eng, {
      siteId,
      title: 'Register follows the panel: trip at 790 °C',
      items: [{ kind: 'modify', limitId: limitIds.changed, changes: { setpoint: 790 } }],
    })
    f = (
      await eng.post(`/api/findings/${f.id}/change-request`, { version: f.version, changeRequestId: cr.id }).expect(200)
    ).body
    expect(f).toMatchObject({ state: 'acknowledged', changeRequestId: cr.id })
    // submitted, not approved: the difference is still a difference
    await upload(eng, exportCsv('790')).expect(201)
    expect((await one('changed_without_moc', tags.changed)).state).toBe('acknowledged')
    await implementChange(crew.tech, await approveChange(crew.approvers, cr))
    const limit = (await eng.get(`/api/limits/${limitIds.changed}`).expect(200)).body
    expect(Number(limit.setpoint)).toBe(790)
    const run = (await upload(eng, exportCsv('790')).expect(201)).body
    expect(run.findingsResolved).toBe(1)
    expect(await one('changed_without_moc', tags.changed)).toMatchObject({
      state: 'resolved',
      resolution: 'change_request',
      changeRequestId: cr.id,
    })
    const recs = (await eng.get(`/api/limits/${limitIds.changed}/reconciliations`).expect(200)).body.items
    expect(recs).toMatchObject([{ sourceId, matched: true }])
  })

  it('a resolved finding reopens when a later run sees the difference again; an accepted one when the value moves', async () => {
    // the panel goes back to 780 °C while the register now says 790 °C
    const run = (await upload(eng, exportCsv('780')).expect(201)).body
    expect(run.findingsReopened).toBe(1)
    const reopened = await one('changed_without_moc', tags.changed)
    expect(reopened).toMatchObject({ state: 'open', reopenCount: 1, registerValue: '790', deviceValue: '780' })
    // nothing else moved: the accepted one is still accepted
    expect((await one('disabled', tags.disabled)).state).toBe('accepted')
    // the alarm comes back enabled (difference gone), then is disabled again: the acceptance no longer holds
    const enabled = exportCsv('780').replace(`${tags.disabled},enabled,no,`, `${tags.disabled},enabled,yes,`)
    await upload(eng, enabled).expect(201)
    expect((await one('disabled', tags.disabled)).state).toBe('accepted')
    const again = (await upload(eng, exportCsv('780')).expect(201)).body
    expect(again.findingsReopened).toBe(1)
    expect(await one('disabled', tags.disabled)).toMatchObject({ state: 'open', reopenCount: 1 })
  })
})
