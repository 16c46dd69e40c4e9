import {
  type ChangeItemDto,
  type ChangeRequestDto,
  type ChangeStatus,
  IMPACT_CHECKLIST,
} from '@shared/schemas/change-requests.ts'
import { at, FHR } from '../mount-view.ts'

// A change request of Fernhollow Refinery (invented demo data) in any state, with its items and checklist, for the
// change request's page and form. Times are hours from the page tests' NOW (../mount-view.ts).

export const ME = 7
export const PROPOSER = 100

export function item(id: number, o: Partial<ChangeItemDto> = {}): ChangeItemDto {
  return {
    id,
    position: id,
    kind: 'modify',
    limitId: null,
    instrumentId: null,
    targetTag: `TSHH-10${id}`,
    unit: '°C',
    changes: { setpoint: { from: 410, to: 405 } },
    baseRevision: 1,
    currentRevision: 1,
    stale: false,
    windowBefore: null,
    windowAfter: null,
    silRated: false,
    implementedAt: null,
    implementedBy: null,
    readBack: null,
    deviceFields: ['setpoint'],
    readBackExpected: null,
    ...o,
  }
}

/** The checklist with every item ticked but those of `open`. */
export const checklist = (open: string[] = []) =>
  IMPACT_CHECKLIST.map((c) => ({
    item: c.item,
    label: c.label,
    group: c.group,
    doneBy: open.includes(c.item) ? null : 'Someone',
    doneAt: open.includes(c.item) ? null : at(-5),
    notApplicable: false,
    note: '',
  }))

export function request(status: ChangeStatus, o: Partial<ChangeRequestDto> = {}): ChangeRequestDto {
  const approved = ['approved', 'implemented', 'closed'].includes(status)
  return {
    id: 12,
    siteId: FHR.id,
    siteCode: 'FHR',
    type: 'permanent',
    title: 'Lower the heater outlet trip',
    rationale: 'New burner tiles',
    hazardReference: 'HAZOP-H101-7',
    status,
    proposerId: PROPOSER,
    proposerName: 'Ada Quill',
    editorIds: [PROPOSER],
    expiresAt: null,
    approvalsRequired: 1,
    approvalsHeld: approved ? 1 : 0,
    reviewsRequired: [],
    contentHash: 'ab'.repeat(32),
    submittedAt: status === 'draft' ? null : at(-8),
    approvedAt: approved ? at(-6) : null,
    implementedAt: status === 'implemented' || status === 'closed' ? at(-2) : null,
    closedAt: status === 'closed' ? at(-1) : null,
    approvalExpiresAt: approved ? at(24) : null,
    emergencyFlagged: false,
    reversesId: null,
    reversals: [],
    temporaryState: null,
    pssr: null,
    items: [item(1, status === 'implemented' || status === 'closed' ? { implementedAt: at(-2) } : {})],
    checklist: checklist(),
    signatures: [],
    attachments: [],
    version: 1,
    createdAt: at(-10),
    updatedAt: at(-1),
    ...o,
  }
}
