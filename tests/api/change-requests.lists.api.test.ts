import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ApiAgent, signedIn } from './helpers/agent.ts'
import { approveChange, buildHeaterTrip, dualRoleApprover, submitChange } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = ['engineer', 'approver', 'approver2', 'technician', 'supervisor', 'operator'] as const
type Who = (typeof PEOPLE)[number] | 'dual'
const as = {} as Record<Who, ApiAgent>
/** The requests of this file by letter. */
const cr: Record<string, number> = {}

beforeAll(async () => {
  const app = createApp(ctx)
  for (const who of PEOPLE) as[who] = await signedIn(app, who)
  const admin = await signedIn(app, 'admin')
  // an approver who is also a safety engineer at the refinery
  as.dual = (await dualRoleApprover(app, admin)).agent

  const create = async (by: ApiAgent, opts: { sil?: 2 } = {}) => {
    const { site, limit } = await buildHeaterTrip(by, opts)
    return { siteId: site.id, items: [{ kind: 'create', limitId: limit.id }] }
  }
  // A: a draft
  cr.A = (
    await as.engineer
      .post('/api/change-requests', { ...(await create(as.engineer)), type: 'permanent', title: 'A draft' })
      .expect(201)
  ).body.id
  // B: submitted
  cr.B = (await submitChange(as.engineer, { ...(await create(as.engineer)), title: 'B submitted' })).id
  // C: SIL-rated, one of two approvals held (by approver)
  const c = await submitChange(as.engineer, { ...(await create(as.engineer, { sil: 2 })), title: 'C half approved' })
  await as.approver.post(`/api/change-requests/${c.id}/approvals`, { password: PW }).expect(200)
  cr.C = c.id
  // E: proposed by the engineer, edited by the dual-role user, submitted again
  const e = await submitChange(as.engineer, { ...(await create(as.engineer)), title: 'E edited' })
  await as.dual.patch(`/api/change-requests/${e.id}`, { rationale: 'clarified' }).expect(200)
  await as.engineer.post(`/api/change-requests/${e.id}/submission`).expect(200)
  cr.E = e.id
  // F: proposed by the dual-role user
  cr.F = (await submitChange(as.dual, { ...(await create(as.dual)), title: 'F by an approver' })).id
  // G: approved
  cr.G = (
    await approveChange(
      [as.approver],
      await submitChange(as.engineer, { ...(await create(as.engineer)), title: 'G approved' }),
    )
  ).id
  // H: an emergency change, submitted
  cr.H = (
    await submitChange(as.engineer, { ...(await create(as.engineer)), type: 'emergency', title: 'H emergency' })
  ).id
})

const letters = (ids: number[]) =>
  Object.entries(cr)
    .filter(([, id]) => ids.includes(id))
    .map(([l]) => l)
    .sort()

async function list(who: Who, view: 'mine' | 'waiting' | 'all') {
  const body = (await as[who].get(`/api/change-requests?view=${view}`).expect(200)).body as {
    total: number
    items: { id: number }[]
  }
  expect(body.total).toBe(body.items.length)
  return letters(body.items.map((i) => i.id))
}

describe('change lists: mine, waiting for me, all', () => {
  it('view=mine lists the requests the user proposed', async () => {
    expect(await list('engineer', 'mine')).toEqual(['A', 'B', 'C', 'E', 'G', 'H'])
    expect(await list('dual', 'mine')).toEqual(['F'])
    expect(await list('approver', 'mine')).toEqual([])
  })

  it('view=waiting: approvers see submitted requests they did not propose, edit or sign; technicians see approved ones', async () => {
    // IEC 61511 independence of approver: the own, edited and already signed requests are not offered
    expect(await list('approver', 'waiting')).toEqual(['B', 'E', 'F', 'H'])
    expect(await list('approver2', 'waiting')).toEqual(['B', 'C', 'E', 'F', 'H'])
    expect(await list('dual', 'waiting')).toEqual(['B', 'C', 'H'])
    expect(await list('technician', 'waiting')).toEqual(['G'])
    // the shift supervisor implements emergency changes first
    expect(await list('supervisor', 'waiting')).toEqual(['H'])
    expect(await list('engineer', 'waiting')).toEqual([])
    expect(await list('operator', 'waiting')).toEqual([])
  })

  it('waiting-count matches the waiting list', async () => {
    const expected: Record<Who, number> = {
      engineer: 0,
      approver: 4,
      approver2: 5,
      dual: 3,
      technician: 1,
      supervisor: 1,
      operator: 0,
    }
    for (const [who, n] of Object.entries(expected) as [Who, number][]) {
      expect((await as[who].get('/api/change-requests/waiting-count').expect(200)).body, who).toEqual({ count: n })
    }
    // a signature moves the request out of the signer's list and the counter follows
    await as.approver2.post(`/api/change-requests/${cr.B}/approvals`, { password: PW }).expect(200)
    expect((await as.approver2.get('/api/change-requests/waiting-count').expect(200)).body).toEqual({ count: 4 })
    expect((await as.approver.get('/api/change-requests/waiting-count').expect(200)).body).toEqual({ count: 3 })
    expect(await list('technician', 'waiting')).toEqual(['B', 'G'])
    expect((await as.technician.get('/api/change-requests/waiting-count').expect(200)).body).toEqual({ count: 2 })
  })

  it("view=all lists every request of the user's sites, filtered by state and type", async () => {
    expect(await list('operator', 'all')).toEqual(['A', 'B', 'C', 'E', 'F', 'G', 'H'])
    const emergencies = (await as.operator.get('/api/change-requests?type=emergency').expect(200)).body
    expect(letters(emergencies.items.map((i: { id: number }) => i.id))).toEqual(['H'])
    const drafts = (await as.operator.get('/api/change-requests?status=draft').expect(200)).body
    expect(letters(drafts.items.map((i: { id: number }) => i.id))).toEqual(['A'])
  })
})
