import { z } from 'zod'

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

/** The impact checklist of a change (each ticked with who and when). */
export const IMPACT_CHECKLIST = [
  { item: 'safety_requirements', label: 'Safety requirements specification updated' },
  { item: 'cause_and_effect', label: 'Cause-and-effect matrix updated' },
  { item: 'drawings', label: 'Drawings and loop diagrams updated' },
  { item: 'operating_procedures', label: 'Operating procedures updated' },
  { item: 'alarm_response', label: 'Alarm response guidance updated' },
  { item: 'training', label: 'People affected trained or briefed' },
] as const
export type ChecklistItem = (typeof IMPACT_CHECKLIST)[number]['item']

/** Limit fields whose value lives on the device: implementation reads them back and they must equal the approved value. */
export const DEVICE_FIELDS_LIMIT = [
  'setpoint',
  'deadband',
  'deadbandUnit',
  'onDelaySec',
  'offDelaySec',
  'latching',
] as const
export const DEVICE_FIELDS_INSTRUMENT = ['rangeLow', 'rangeHigh', 'unit', 'signal', 'burnout'] as const

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
  .object({ siteId: z.number().int().positive(), ...fields })
  .superRefine((v, ctx) => {
    if (v.type === 'temporary' && !v.expiresAt)
      ctx.addIssue({ code: 'custom', path: ['expiresAt'], message: 'A temporary change needs an expiry' })
  })
export type CreateChangeRequestInput = z.infer<typeof CreateChangeRequestInputSchema>
export const UpdateChangeRequestInputSchema = z.object(fields).partial()
export type UpdateChangeRequestInput = z.infer<typeof UpdateChangeRequestInputSchema>

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
export const ClosureInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  pssr: z.object({
    reference: z.string().trim().min(1, 'Enter the review reference').max(200),
    findings: z.string().trim().max(5000).default(''),
    readyForService: z.literal(true, 'The review must confirm the function is ready for service'),
  }),
})
export const ChecklistInputSchema = z.object({ done: z.boolean(), note: z.string().trim().max(500).default('') })

export interface SignatureDto {
  id: number
  userId: number
  name: string
  meaning: string
  at: string
  contentHash: string
  comment: string
  itemId: number | null
  voided: boolean
  voidReason: string | null
  matchesContent: boolean
}
export interface ChangeItemDto {
  id: number
  position: number
  kind: ChangeItemInput['kind']
  limitId: number | null
  instrumentId: number | null
  targetTag: string
  unit: string
  changes: Record<string, { from: unknown; to: unknown }>
  baseRevision: number
  currentRevision: number
  stale: boolean
  windowBefore: { errors: unknown[]; warnings: unknown[] } | null
  windowAfter: { errors: unknown[]; warnings: unknown[] } | null
  silRated: boolean
  implementedAt: string | null
  implementedBy: string | null
  readBack: unknown
  deviceFields: string[]
}
export interface ChangeRequestDto {
  id: number
  siteId: number
  siteCode: string
  type: (typeof CHANGE_TYPES)[number]
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
  contentHash: string
  submittedAt: string | null
  approvedAt: string | null
  implementedAt: string | null
  closedAt: string | null
  approvalExpiresAt: string | null
  emergencyFlagged: boolean
  pssr: Record<string, unknown> | null
  items: ChangeItemDto[]
  checklist: { item: string; label: string; doneBy: string | null; doneAt: string | null; note: string }[]
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
