import { z } from 'zod'
import { DecimalSchema, IdSchema, jsonFormField, ListQuerySchema, repeated, VerdictSchema } from './common.ts'

// Reconciliation of the register with the plant (docs/reconciliation.md): sources (configuration exports, live
// Modbus TCP devices read only), runs and findings.

export const SOURCE_KINDS = ['export', 'modbus'] as const
export type SourceKind = (typeof SOURCE_KINDS)[number]

/** Attributes of a limit that a source can hold, compared with the register's active values. */
export const RECON_ATTRIBUTES = [
  'setpoint',
  'deadband',
  'onDelaySec',
  'offDelaySec',
  'priority',
  'enabled',
  'latching',
  'bypassed',
] as const
export type ReconAttribute = (typeof RECON_ATTRIBUTES)[number]
export const NUMERIC_ATTRIBUTES = ['setpoint', 'deadband', 'onDelaySec', 'offDelaySec'] as const
export const FLAG_ATTRIBUTES = ['enabled', 'latching', 'bypassed'] as const

export const FINDING_KINDS = [
  'changed_without_moc',
  'not_in_register',
  'missing_on_device',
  'bypassed_without_authorization',
  'disabled',
  'unreachable',
] as const
export type FindingKind = (typeof FINDING_KINDS)[number]
export const FINDING_STATES = ['open', 'acknowledged', 'resolved', 'accepted'] as const
export type FindingState = (typeof FINDING_STATES)[number]
export const FINDING_RESOLUTIONS = ['change_request', 'device_corrected', 'accepted'] as const
export type FindingResolution = (typeof FINDING_RESOLUTIONS)[number]
export const RUN_TRIGGERS = ['manual', 'schedule', 'upload'] as const
export type RunTrigger = (typeof RUN_TRIGGERS)[number]
export const RUN_OUTCOMES = ['completed', 'unreachable'] as const
export type RunOutcome = (typeof RUN_OUTCOMES)[number]

export const MODBUS_DATA_TYPES = ['int16', 'uint16', 'int32', 'float32'] as const
export type ModbusDataType = (typeof MODBUS_DATA_TYPES)[number]
export const WORD_ORDERS = ['high_first', 'low_first'] as const
export type WordOrder = (typeof WORD_ORDERS)[number]

/** One line of a device's register map: where an attribute of a limit lives and how to decode it. */
export const RegisterMapEntrySchema = z
  .object({
    tag: z.string().trim().min(1, 'Enter the limit tag').max(80),
    attribute: z.enum(RECON_ATTRIBUTES),
    functionCode: z.union([z.literal(3), z.literal(4)], 'Function code 3 (holding) or 4 (input registers)'),
    address: z.number().int().min(0).max(65535),
    dataType: z.enum(MODBUS_DATA_TYPES),
    wordOrder: z.enum(WORD_ORDERS).default('high_first'),
    scale: DecimalSchema.default('1'),
    unit: z.string().trim().max(20).nullable().default(null),
    /** A flag packed in one bit of a status word (0 = least significant). */
    bit: z.number().int().min(0).max(15).nullable().default(null),
    /** Largest difference still counted as equal, in the register's unit. */
    tolerance: DecimalSchema.nullable().default(null),
  })
  .refine((e) => !(e.dataType === 'int32' || e.dataType === 'float32') || e.address < 65535, {
    message: 'A 32-bit value needs two registers',
    path: ['address'],
  })
  .refine((e) => e.bit === null || e.dataType === 'uint16' || e.dataType === 'int16', {
    message: 'A bit can be read only from a 16-bit register',
    path: ['bit'],
  })
export type RegisterMapEntry = z.infer<typeof RegisterMapEntrySchema>
export const RegisterMapSchema = z.array(RegisterMapEntrySchema).max(2000)

/** Columns of an export file (after mapping): one row per tag and attribute. */
export const EXPORT_COLUMNS = [
  { key: 'tag', header: 'Tag' },
  { key: 'attribute', header: 'Attribute' },
  { key: 'value', header: 'Value' },
  { key: 'unit', header: 'Unit' },
] as const
export type ExportColumnKey = (typeof EXPORT_COLUMNS)[number]['key']
export const EXPORT_REQUIRED_COLUMNS = ['tag', 'attribute', 'value'] as const
export const ExportMappingSchema = z
  .record(z.string().trim().min(1).max(200), z.union([z.enum(['tag', 'attribute', 'value', 'unit']), z.literal('')]))
  .refine((m) => Object.keys(m).length <= 200, 'A mapping holds at most 200 headers')
export type ExportMapping = z.infer<typeof ExportMappingSchema>

export const TolerancesSchema = z.partialRecord(z.enum(NUMERIC_ATTRIBUTES), DecimalSchema)

const sourceFields = {
  name: z.string().trim().min(1, 'Enter a name').max(120),
  description: z.string().trim().max(2000).default(''),
  host: z.string().trim().min(1).max(255).nullable().default(null),
  port: z.number().int().min(1).max(65535).nullable().default(null),
  unitId: z.number().int().min(0).max(255).nullable().default(null),
  timeoutMs: z.number().int().min(100).max(60000).default(3000),
  registerMap: RegisterMapSchema.default([]),
  columnMapping: ExportMappingSchema.default({}),
  areaIds: z.array(IdSchema).max(100).default([]),
  tolerances: TolerancesSchema.default({}),
  scheduleHours: z
    .number()
    .positive()
    .max(24 * 31)
    .nullable()
    .default(null),
  active: z.boolean().default(true),
}

export const CreateSourceInputSchema = z
  .object({ siteId: IdSchema, kind: z.enum(SOURCE_KINDS), ...sourceFields })
  .superRefine((s, ctx) => {
    if (s.kind !== 'modbus') return
    for (const f of ['host', 'port', 'unitId'] as const)
      if (s[f] === null) ctx.addIssue({ code: 'custom', path: [f], message: 'A Modbus device needs its address' })
  })
export type CreateSourceInput = z.infer<typeof CreateSourceInputSchema>
export const UpdateSourceInputSchema = z.object({ ...sourceFields, version: z.number().int().positive() }).partial({
  name: true,
  description: true,
  host: true,
  port: true,
  unitId: true,
  timeoutMs: true,
  registerMap: true,
  columnMapping: true,
  areaIds: true,
  tolerances: true,
  scheduleHours: true,
  active: true,
})

export const SourceListQuerySchema = ListQuerySchema.extend({ siteId: repeated(IdSchema) })

export const SourceSchema = z.object({
  id: z.number(),
  siteId: z.number(),
  name: z.string(),
  kind: z.enum(SOURCE_KINDS),
  description: z.string(),
  host: z.string().nullable(),
  port: z.number().nullable(),
  unitId: z.number().nullable(),
  timeoutMs: z.number(),
  registerMap: z.array(RegisterMapEntrySchema),
  columnMapping: z.record(z.string(), z.string()),
  areaIds: z.array(z.number()),
  tolerances: z.record(z.string(), z.string()),
  scheduleHours: z.number().nullable(),
  effectiveScheduleHours: z.number().nullable(),
  active: z.boolean(),
  nextRunAt: z.string().nullable(),
  version: z.number(),
  lastRun: z.lazy(() => RunSchema.nullable()),
  openFindings: z.number(),
})
export type Source = z.infer<typeof SourceSchema>

/** One decoded value of "read now". */
export const ReadValueSchema = z.object({
  tag: z.string(),
  attribute: z.enum(RECON_ATTRIBUTES),
  functionCode: z.number(),
  address: z.number(),
  raw: z.array(z.number()),
  value: z.string().nullable(),
  unit: z.string().nullable(),
  error: z.string().nullable(),
})
export type ReadValue = z.infer<typeof ReadValueSchema>
export const ReadNowResultSchema = z.object({
  reachable: z.boolean(),
  error: z.string().nullable(),
  readAt: z.string(),
  values: z.array(ReadValueSchema),
})
export type ReadNowResult = z.infer<typeof ReadNowResultSchema>

export const RunSchema = z.object({
  id: z.number(),
  sourceId: z.number(),
  sourceName: z.string(),
  siteId: z.number(),
  trigger: z.enum(RUN_TRIGGERS),
  outcome: z.enum(RUN_OUTCOMES),
  startedAt: z.string(),
  finishedAt: z.string(),
  runBy: z.string().nullable(),
  fileName: z.string().nullable(),
  rowsRead: z.number(),
  rowsIgnored: z.number(),
  limitsCompared: z.number(),
  attributesCompared: z.number(),
  differences: z.number(),
  findingsNew: z.number(),
  findingsReopened: z.number(),
  findingsResolved: z.number(),
  error: z.string().nullable(),
})
export type Run = z.infer<typeof RunSchema>
export const RunListQuerySchema = ListQuerySchema.extend({ siteId: repeated(IdSchema), sourceId: repeated(IdSchema) })
export const RunNowInputSchema = z.object({}).strict()

/** The text fields sent with an export upload (multipart form fields are strings). */
export const ExportUploadFieldsSchema = z.object({
  mapping: jsonFormField('The mapping must be a JSON object (file header → column)')
    .pipe(ExportMappingSchema)
    .optional(),
})

export const FindingListQuerySchema = ListQuerySchema.extend({
  siteId: repeated(IdSchema),
  sourceId: repeated(IdSchema),
  limitId: repeated(IdSchema),
  kind: repeated(z.enum(FINDING_KINDS)),
  state: repeated(z.enum(FINDING_STATES)),
})
export type FindingListQuery = z.infer<typeof FindingListQuerySchema>

export const FindingSchema = z.object({
  id: z.number(),
  siteId: z.number(),
  sourceId: z.number(),
  sourceName: z.string(),
  sourceKind: z.enum(SOURCE_KINDS),
  limitId: z.number().nullable(),
  tag: z.string(),
  attribute: z.string(),
  kind: z.enum(FINDING_KINDS),
  state: z.enum(FINDING_STATES),
  registerValue: z.string().nullable(),
  deviceValue: z.string().nullable(),
  unit: z.string().nullable(),
  detail: z.string(),
  present: z.boolean(),
  firstSeenAt: z.string(),
  lastSeenAt: z.string(),
  openedAt: z.string(),
  reopenCount: z.number(),
  acknowledgedBy: z.string().nullable(),
  acknowledgedAt: z.string().nullable(),
  changeRequestId: z.number().nullable(),
  resolution: z.enum(FINDING_RESOLUTIONS).nullable(),
  resolvedBy: z.string().nullable(),
  resolvedAt: z.string().nullable(),
  acceptReason: z.string().nullable(),
  signatures: z.array(z.object({ name: z.string(), meaning: z.string(), at: z.string(), matchesContent: z.boolean() })),
  version: z.number(),
  actions: z.object({ acknowledge: VerdictSchema, linkChange: VerdictSchema, accept: VerdictSchema }),
})
export type Finding = z.infer<typeof FindingSchema>

export const AcknowledgeInputSchema = z.object({ version: z.number().int().positive() })
export const LinkChangeInputSchema = z.object({ version: z.number().int().positive(), changeRequestId: IdSchema })
export const AcceptInputSchema = z.object({
  version: z.number().int().positive(),
  reason: z.string().trim().min(10, 'Say why the difference is accepted (at least 10 characters)').max(2000),
  password: z.string().min(1, 'Enter your password to sign').max(200),
})

export const FindingFiguresQuerySchema = z.object({
  siteId: repeated(IdSchema),
  months: z.coerce.number().int().min(1).max(36).default(12),
})
export const FindingFiguresSchema = z.object({
  openByKindAndAge: z.array(
    z.object({
      kind: z.enum(FINDING_KINDS),
      under7d: z.number(),
      under30d: z.number(),
      over30d: z.number(),
      total: z.number(),
    }),
  ),
  changesWithoutMocPerMonth: z.array(z.object({ month: z.string(), count: z.number() })),
  target: z.literal(0),
})
export type FindingFigures = z.infer<typeof FindingFiguresSchema>

/** A limit's last reconciliation per source (the limit page). */
export const LimitReconciliationSchema = z.object({
  sourceId: z.number(),
  sourceName: z.string(),
  runId: z.number(),
  at: z.string(),
  matched: z.boolean(),
  differences: z.array(z.string()),
})
export type LimitReconciliation = z.infer<typeof LimitReconciliationSchema>
