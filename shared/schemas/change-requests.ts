import { z } from 'zod'
import { IdSchema, type ListResult, PageSchema, repeated, type SignatureBase } from './common.ts'
import type { WindowFindingDto } from './register.ts'

/**
 * The discipline reviews a site policy may ask of a change request (docs/change-requests.md#discipline-reviews):
 * reviewers sign before the approver.
 */
export const DISCIPLINES = ['operations', 'process', 'instrumentation'] as const
export type Discipline = (typeof DISCIPLINES)[number]
export const DISCIPLINE_LABELS: Record<Discipline, string> = {
  operations: 'Operations',
  process: 'Process',
  instrumentation: 'Instrumentation',
}
/** The signature meaning of a discipline review. */
export const reviewMeaning = (d: Discipline) => `reviewed_${d}` as const

export const CHANGE_TYPES = ['permanent', 'temporary', 'emergency'] as const
export const CHANGE_STATUSES = [
  'draft',
  'submitted',
  'approved',
  'rejected',
  'implemented',
  'closed',
  'withdrawn',
] as const
export type ChangeStatus = (typeof CHANGE_STATUSES)[number]

export type ChangeType = (typeof CHANGE_TYPES)[number]
export const CHANGE_ITEM_KINDS = ['create', 'modify', 'retire', 'instrument'] as const
export type ChangeItemKind = (typeof CHANGE_ITEM_KINDS)[number]

/**
 * The readiness checklist of a change, in two groups (docs/change-requests.md#checklist): what must be done before
 * the change is put into service (OSHA 1910.119(l)(3)-(4) and (i)) and what is closed out afterwards. Each item is
 * ticked, or marked not applicable with a reason, with who and when.
 */
export const CHECKLIST_GROUPS = ['before', 'closeout'] as const
export type ChecklistGroup = (typeof CHECKLIST_GROUPS)[number]
export const IMPACT_CHECKLIST = [
  { item: 'operating_procedures', group: 'before', label: 'Operating procedures updated' },
  { item: 'alarm_response', group: 'before', label: 'Alarm response guidance updated' },
  { item: 'training', group: 'before', label: 'People affected informed and trained' },
  { item: 'pssr', group: 'before', label: 'Pre-start-up safety review signed' },
  { item: 'safety_requirements', group: 'closeout', label: 'Safety requirements specification updated' },
  { item: 'cause_and_effect', group: 'closeout', label: 'Cause-and-effect matrix updated' },
  { item: 'drawings', group: 'closeout', label: 'Drawings and loop diagrams updated as built' },
] as const satisfies readonly { item: string; group: ChecklistGroup; label: string }[]
export type ChecklistItem = (typeof IMPACT_CHECKLIST)[number]['item']
/** The checklist item a path names (`PUT /api/change-requests/:id/checklist/:item`). */
export const ChecklistItemSchema = z.enum(IMPACT_CHECKLIST.map((c) => c.item))
export const CHECKLIST_GROUP_LABELS: Record<ChecklistGroup, string> = {
  before: 'Before implementation',
  closeout: 'Close-out',
}

/**
 * Limit fields whose value lives on the device: implementation reads them back
 * and they must equal the approved value.
 */
export const DEVICE_FIELDS_LIMIT = [
  'setpoint',
  'deadband',
  'deadbandUnit',
  'onDelaySec',
  'offDelaySec',
  'latching',
] as const
export const DEVICE_FIELDS_INSTRUMENT = ['rangeLow', 'rangeHigh', 'unit', 'signal', 'burnout'] as const
/**
 * Read back on every item that puts an alarm or alert in service or changes it, changed or not: the alarm priority
 * (alarms only) and the enabled state (not suppressed or shelved), the attributes most often changed without a
 * change request (docs/change-requests.md#implementation-and-read-back).
 */
export const READ_BACK_STATE_FIELDS = ['priority', 'enabled'] as const

/** `POST /api/change-requests/:id/read-back-checks`: compare a read-back with the approved values, writing nothing. */
export const ReadBackCheckInputSchema = z.object({
  itemId: z.number().int().positive(),
  readBack: z.record(z.string().max(40), z.unknown()).default({}),
})
/** The answer of a read-back check: each field as entered beside its approved value, compared exactly. */
export interface ReadBackComparison {
  itemId: number
  equal: boolean
  fields: { field: string; entered: unknown; approved: unknown; equal: boolean }[]
}

const changes = z.record(z.string().min(1).max(40), z.unknown())

export const ChangeItemInputSchema = z.discriminatedUnion(
  'kind',
  [
    z.object({ kind: z.literal('create'), limitId: z.number().int().positive() }),
    z.object({
      kind: z.literal('modify'),
      limitId: z.number().int().positive(),
      changes: changes.refine((c) => Object.keys(c).length > 0, 'Change at least one field'),
    }),
    z.object({ kind: z.literal('retire'), limitId: z.number().int().positive() }),
    z.object({
      kind: z.literal('instrument'),
      instrumentId: z.number().int().positive(),
      changes: changes.refine((c) => Object.keys(c).length > 0, 'Change at least one field'),
    }),
  ],
  'Choose what the item does',
)
export type ChangeItemInput = z.infer<typeof ChangeItemInputSchema>

const fields = {
  type: z.enum(CHANGE_TYPES),
  title: z.string().trim().min(1, 'Enter a title').max(200),
  rationale: z.string().trim().max(5000).default(''),
  hazardReference: z.string().trim().max(200).default(''),
  expiresAt: z.iso.datetime({ offset: true }).nullable().default(null),
  items: z.array(ChangeItemInputSchema).min(1, 'Add at least one item').max(500),
}

export const CreateChangeRequestInputSchema = z
  .object({
    siteId: z.number().int().positive(),
    ...fields,
    /** the temporary change this request reverses (docs/change-requests.md#expired-temporary-changes) */
    reversesId: z.number().int().positive().max(2_147_483_647).nullable().default(null),
    /** the change proposal this request develops: creating the request takes the proposal up */
    proposalId: z.number().int().positive().max(2_147_483_647).nullable().default(null),
  })
  .superRefine((v, ctx) => {
    if (v.type === 'temporary' && !v.expiresAt)
      ctx.addIssue({ code: 'custom', path: ['expiresAt'], message: 'A temporary change needs an expiry' })
    if (v.reversesId !== null && v.type === 'temporary')
      ctx.addIssue({ code: 'custom', path: ['type'], message: 'A reversal is not itself temporary' })
  })
export type CreateChangeRequestInput = z.infer<typeof CreateChangeRequestInputSchema>
/** `POST /api/change-requests` as the client sends it. */
export type CreateChangeRequestBody = z.input<typeof CreateChangeRequestInputSchema>
/** The request's content as the form writes it, for a creation or an edit. */
export type ChangeRequestBody = Omit<CreateChangeRequestBody, 'siteId' | 'reversesId' | 'proposalId'>
export const UpdateChangeRequestInputSchema = z.object(fields).partial()
export type UpdateChangeRequestInput = z.infer<typeof UpdateChangeRequestInputSchema>
/** `PATCH /api/change-requests/:id`: the fields to change and the version the editor read (a stale one is 409). */
export const ChangeRequestPatchSchema = UpdateChangeRequestInputSchema.extend({ version: z.number().int().optional() })
export type ChangeRequestPatch = z.input<typeof ChangeRequestPatchSchema>

export const SignInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})
export const RejectInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().min(1, 'Say why the change is rejected').max(2000),
})
export const ImplementInputSchema = z.union([
  z.object({
    itemId: z.number().int().positive(),
    readBack: z.record(z.string(), z.unknown()).default({}),
    password: z.string().min(1).max(128),
    comment: z.string().trim().max(2000).default(''),
  }),
  z.object({
    allItems: z.literal(true),
    deviceListConfirmed: z.literal(true, 'Confirm that the device list was read back'),
    password: z.string().min(1).max(128),
    comment: z.string().trim().max(2000).default(''),
  }),
])
export const ReviewInputSchema = z.object({
  discipline: z.enum(DISCIPLINES),
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})
export type ReviewInput = z.infer<typeof ReviewInputSchema>
export const ClosureInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  pssr: z.object({
    reference: z.string().trim().min(1, 'Enter the review reference').max(200),
    findings: z.string().trim().max(5000).default(''),
    readyForService: z.literal(true, 'The review must confirm the function is ready for service'),
  }),
})
export const ChecklistInputSchema = z
  .object({
    done: z.boolean(),
    notApplicable: z.boolean().default(false),
    note: z.string().trim().max(500).default(''),
  })
  .superRefine((v, ctx) => {
    if (v.done && v.notApplicable && !v.note)
      ctx.addIssue({ code: 'custom', path: ['note'], message: 'Say why the item does not apply' })
  })
export type ChecklistInput = z.infer<typeof ChecklistInputSchema>

export interface SignatureDto extends SignatureBase {
  comment: string
  itemId: number | null
  voided: boolean
  voidReason: string | null
  matchesContent: boolean
}
/** An operating-window finding of a change item; on an instrument item each names the limit it concerns. */
export interface ItemWindowFinding extends WindowFindingDto {
  tag?: string
}
/** The operating-window findings on one side of a change item (before it, or with its new values). */
export interface ItemWindow {
  errors: ItemWindowFinding[]
  warnings: ItemWindowFinding[]
}
/** What the device must hold beyond the changed fields after implementation (alarm priority, enabled). */
export type ReadBackExpected = {
  priority?: string | null
  enabled?: boolean
}
/**
 * What implementation recorded as read back from the device: each device field as entered, or, for a whole request
 * implemented from the device list, `{ deviceListConfirmed: true }`.
 */
export type ItemReadBack = Record<string, unknown> & { deviceListConfirmed?: boolean }

export interface ChangeItemDto {
  id: number
  position: number
  kind: ChangeItemKind
  limitId: number | null
  instrumentId: number | null
  targetTag: string
  unit: string
  changes: Record<string, { from: unknown; to: unknown }>
  baseRevision: number
  currentRevision: number
  stale: boolean
  windowBefore: ItemWindow | null
  windowAfter: ItemWindow | null
  silRated: boolean
  implementedAt: string | null
  implementedBy: string | null
  readBack: ItemReadBack | null
  /** every field read back at implementation: the changed device fields, then priority and enabled state */
  deviceFields: string[]
  readBackExpected: ReadBackExpected | null
}
export interface ChangeRequestDto {
  id: number
  siteId: number
  siteCode: string
  type: ChangeType
  title: string
  rationale: string
  hazardReference: string
  status: ChangeStatus
  proposerId: number
  proposerName: string
  editorIds: number[]
  expiresAt: string | null
  approvalsRequired: number
  approvalsHeld: number
  /** the discipline reviews this request needs before approval (from the site policy when it was written) */
  reviewsRequired: Discipline[]
  contentHash: string
  submittedAt: string | null
  approvedAt: string | null
  implementedAt: string | null
  closedAt: string | null
  approvalExpiresAt: string | null
  emergencyFlagged: boolean
  /** the temporary change this request reverses */
  reversesId: number | null
  /** the requests reversing this temporary change */
  reversals: { id: number; status: ChangeStatus; title: string }[]
  /** a temporary change's standing now: open, expired (to be reverted) or reverted (docs/change-requests.md) */
  temporaryState: 'open' | 'expired' | 'reverted' | null
  pssr: Record<string, unknown> | null
  items: ChangeItemDto[]
  checklist: {
    item: ChecklistItem
    label: string
    group: ChecklistGroup
    doneBy: string | null
    doneAt: string | null
    notApplicable: boolean
    note: string
  }[]
  signatures: SignatureDto[]
  attachments: {
    id: number
    fileName: string
    contentType: string
    sizeBytes: number
    uploadedAt: string
    uploadedBy: string
  }[]
  version: number
  createdAt: string
  updatedAt: string
}

/** `GET /api/change-requests`: the change list (mine, waiting for me, or all of my sites; or those of one limit). */
export const ChangeListQuerySchema = z.object({
  view: z.enum(['all', 'mine', 'waiting']).default('all'),
  status: repeated(z.enum(CHANGE_STATUSES)),
  type: repeated(z.enum(CHANGE_TYPES)),
  siteId: repeated(IdSchema),
  limitId: IdSchema.optional(),
  /** only temporary changes past their end and not reverted ("expired, to be reverted") */
  expiredTemporary: z
    .enum(['true', 'false'])
    .transform((v) => v === 'true')
    .optional(),
  q: z.string().trim().max(100).optional(),
  ...PageSchema.shape,
})
export type ChangeListQuery = z.infer<typeof ChangeListQuerySchema>
/** The list query as the client sends it (`expiredTemporary` travels as text). */
export type ChangeListParams = Partial<Omit<ChangeListQuery, 'expiredTemporary'>> & { expiredTemporary?: 'true' }
export type ChangeView = ChangeListQuery['view']

/** One row of the change list. */
export interface ChangeListItem {
  id: number
  title: string
  type: ChangeType
  status: ChangeStatus
  siteId: number
  siteCode: string
  proposerName: string
  itemCount: number
  approvalsRequired: number
  approvalsHeld: number
  updatedAt: string
  createdAt: string
  expiresAt: string | null
  implementedAt: string | null
  emergencyFlagged: boolean
  /** a temporary change past its end, on the device and not reverted */
  expiredToRevert: boolean
}
export type ChangeList = ListResult<ChangeListItem>
