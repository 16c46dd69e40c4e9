import type { ApiAgent } from './agent.ts'
import { submitChange } from './factories.ts'

const PW = 'limitkeeper-demo'

/** Puts a proposed limit in service through a change request: engineer proposes, approver signs, technician implements. */
export async function activateLimit(
  agents: { eng: ApiAgent; approver: ApiAgent; tech: ApiAgent; approver2?: ApiAgent },
  limit: { id: number; siteId: number },
) {
  const cr = await submitChange(agents.eng, {
    siteId: limit.siteId,
    title: 'Put in service',
    items: [{ kind: 'create', limitId: limit.id }],
  })
  await agents.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
  if (cr.approvalsRequired > 1) {
    if (!agents.approver2) throw new Error('this change needs a second approver')
    await agents.approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)
  }
  await agents.tech
    .post(`/api/change-requests/${cr.id}/implementations`, { allItems: true, deviceListConfirmed: true, password: PW })
    .expect(200)
  return cr.id as number
}
