import { z } from 'zod'
import { IdSchema, NumberInputSchema, OptionalNumberInputSchema, PageSchema, pageSizeOf, repeated } from './common.ts'
import { structuralClassificationErrors } from '../domain/priority.ts'
import { ROLES } from './users.ts'

// The register's resources (docs/register.md). Decimal inputs are accepted as numbers or numeric strings and stored
// exactly as PostgreSQL numeric; answers carry them as JSON numbers.

const num = NumberInputSchema
const optNum = OptionalNumberInputSchema
const text = (max = 500) => z.string().trim().max(max)

/** Limit classes: an alarm asks the operator to act, an alert only informs, a trip acts by itself. */
export const LIMIT_CLASSES = ['alarm', 'alert', 'trip'] as const
/** Alarm types beyond absolute high/low, recorded even where the product does not compute them. */
export const ALARM_TYPES = ['absolute', 'deviation', 'rate_of_change', 'discrepancy', 'bad_value'] as const
/** Consequence-of-inaction categories of the rationalization record. */
export const IMPACT_CATEGORIES = ['safety', 'environment', 'asset_production'] as const

export const MEASURED_VARIABLES = ['temperature', 'pressure', 'level', 'flow', 'analytical', 'other'] as const
export const TC_TYPES = ['B', 'E', 'J', 'K', 'N', 'R', 'S', 'T'] as const
export const DEVICE_KINDS = [
  'limit_controller',
  'safety_plc',
  'control_system',
  'indicator',
  'switch',
  'other',
] as const
export const RESET_ROLES = [
  'operator',
  'shift_supervisor',
  'technician',
  'safety_engineer',
] as const satisfies readonly (typeof ROLES)[number][]

/** The input signal of an instrument (docs/domain/test-signals.md). */
export const SignalSchema = z.discriminatedUnion(
  'kind',
  [
    z.object({
      kind: z.literal('thermocouple'),
      tcType: z.enum(TC_TYPES, 'Choose the thermocouple type'),
      headTransmitter: z.boolean().default(false),
    }),
    z.object({
      kind: z.literal('rtd'),
      element: z.enum(['Pt100', 'Pt1000']),
      wires: z.union([z.literal(2), z.literal(3), z.literal(4)]),
      headTransmitter: z.boolean().default(false),
    }),
    z.object({ kind: z.literal('current'), sqrtExtraction: z.boolean().default(false) }),
    z.object({
      kind: z.literal('voltage'),
      low: z.union([z.literal(0), z.literal(1)]),
      high: z.union([z.literal(5), z.literal(10)]),
    }),
    z.object({ kind: z.literal('switch') }),
  ],
  'Choose the input signal',
)
export type Signal = z.infer<typeof SignalSchema>

export const ProcessSchema = z.object({
  id: z.number(),
  areaId: z.number(),
  siteId: z.number(),
  name: z.string(),
  description: z.string(),
})
export type Process = z.infer<typeof ProcessSchema>
export const CreateProcessInputSchema = z.object({
  areaId: z.number().int().positive(),
  name: text(120).min(1, 'Enter a name'),
  description: text(2000).default(''),
})
export const UpdateProcessInputSchema = CreateProcessInputSchema.omit({ areaId: true }).partial()

const instrumentFields = {
  processId: z.number().int().positive(),
  tag: text(40)
    .min(1, 'Enter a tag')
    .regex(/^[A-Za-z0-9][A-Za-z0-9._\-/ ]*$/, 'Use letters, digits, dot, dash, slash and underscore'),
  measuredVariable: z.enum(MEASURED_VARIABLES),
  unit: text(20).min(1, 'Enter the unit'),
  pressureReference: z.enum(['gauge', 'absolute', 'differential']).nullable().default(null),
  rangeLow: num,
  rangeHigh: num,
  normalLow: optNum,
  normalHigh: optNum,
  designLow: optNum,
  designHigh: optNum,
  burnout: z.enum(['upscale', 'downscale', 'none']),
  signal: SignalSchema,
  deviceKind: z.enum(DEVICE_KINDS),
  deviceDescription: text(200).default(''),
  /** make and model of the field device; observed failure rates are grouped by device kind and model */
  model: text(120).default(''),
}

function instrumentRules<
  T extends z.ZodType<{
    rangeLow?: number
    rangeHigh?: number
    normalLow?: number | null
    normalHigh?: number | null
    measuredVariable?: string
    pressureReference?: string | null
    signal?: Signal
  }>,
>(schema: T) {
  return schema.superRefine((v, ctx) => {
    if (v.rangeLow !== undefined && v.rangeHigh !== undefined && !(v.rangeHigh > v.rangeLow)) {
      ctx.addIssue({ code: 'custom', path: ['rangeHigh'], message: 'The range top must be above the range bottom' })
    }
    if (v.normalLow != null && v.normalHigh != null && !(v.normalHigh >= v.normalLow)) {
      ctx.addIssue({
        code: 'custom',
        path: ['normalHigh'],
        message: 'The normal range top must not be below its bottom',
      })
    }
    if (v.measuredVariable === 'pressure' && !v.pressureReference) {
      ctx.addIssue({
        code: 'custom',
        path: ['pressureReference'],
        message: 'Say whether the pressure is gauge, absolute or differential',
      })
    }
    if (
      v.measuredVariable &&
      v.measuredVariable !== 'temperature' &&
      v.signal &&
      (v.signal.kind === 'thermocouple' || v.signal.kind === 'rtd')
    ) {
      ctx.addIssue({ code: 'custom', path: ['signal', 'kind'], message: 'Thermocouples and RTDs measure temperature' })
    }
  })
}

export const CreateInstrumentInputSchema = instrumentRules(z.object(instrumentFields))
export const UpdateInstrumentInputSchema = instrumentRules(
  z.object(instrumentFields).omit({ processId: true }).partial(),
)
export type CreateInstrumentInput = z.infer<typeof CreateInstrumentInputSchema>

export const InstrumentSchema = z.object({
  id: z.number(),
  siteId: z.number(),
  areaId: z.number(),
  ...instrumentFields,
  processName: z.string().optional(),
})
export type Instrument = z.infer<typeof InstrumentSchema>
/** An instrument as the API answers it. */
export type InstrumentRecord = Instrument & { revision: number; updatedAt: string }

/** `GET /api/processes`: every process of the sites or areas asked (a plant has tens, so no paging). */
export const ProcessListQuerySchema = z.object({ siteId: repeated(IdSchema), areaId: repeated(IdSchema) })
export type ProcessListQuery = Partial<z.infer<typeof ProcessListQuerySchema>>
/** `GET /api/instruments`: by site, process and tag, a page at a time (100 rows unless asked). */
export const InstrumentListQuerySchema = PageSchema.extend({
  siteId: repeated(IdSchema),
  processId: repeated(IdSchema),
  q: z.string().trim().max(60).optional(),
  pageSize: pageSizeOf(100),
})
export type InstrumentListQuery = Partial<z.infer<typeof InstrumentListQuerySchema>>

/** One field that changed between two revisions of a limit. */
export interface RevisionChange {
  field: string
  from: unknown
  to: unknown
}
/** A revision of a limit (`GET /api/limits/:id/revisions`), newest first. */
export interface LimitRevision {
  revision: number
  changedAt: string
  changedBy: string | null
  changeRequestId: number | null
  reason: string | null
  changes: RevisionChange[]
  snapshot: Record<string, unknown>
}

/** One subsystem of a safety instrumented function (IEC 61508-6 simplified equations). */
export const SubsystemSchema = z.object({
  role: z.enum(['sensor', 'logic', 'final_element']),
  architecture: z.enum(['1oo1', '1oo2', '2oo2', '2oo3', '1oo2D']),
  lambdaDu: z.number().positive('λDU must be positive (per hour)').max(1e-2),
  beta: z.number().min(0).max(0.3),
  mttrHours: z.number().min(0).max(8760),
  testIntervalMonths: z.number().positive().max(240),
  testCoverage: z.number().min(0).max(1),
  missionTimeYears: z.number().positive().max(50),
  /** λDD per channel, h⁻¹ (optional, default 0) */
  lambdaDd: z.number().min(0).max(1e-2).optional(),
  /** λSD per channel, h⁻¹ (optional, default 0; counts in 1oo2D) */
  lambdaSd: z.number().min(0).max(1e-2).optional(),
  /** mean repair time of a failure found at a proof test, h (optional, default: MTTR) */
  mrtHours: z.number().min(0).max(8760).optional(),
})
export type Subsystem = z.infer<typeof SubsystemSchema>

const limitFields = {
  processId: z.number().int().positive(),
  tag: text(40)
    .min(1, 'Enter a tag')
    .regex(/^[A-Za-z0-9][A-Za-z0-9._\-/ ]*$/, 'Use letters, digits, dot, dash, slash and underscore'),
  description: text(500).default(''),
  instrumentIds: z.array(z.number().int().positive()).min(1, 'Choose at least one instrument').max(4),
  direction: z.enum(['high', 'low']),
  limitClass: z.enum(LIMIT_CLASSES),
  setpoint: num,
  deadband: num.refine((v) => v >= 0, 'The deadband cannot be negative').default(0),
  deadbandUnit: z.enum(['eu', 'percent_span']).default('eu'),
  onDelaySec: num.refine((v) => v >= 0, 'Delays cannot be negative').default(0),
  offDelaySec: num.refine((v) => v >= 0, 'Delays cannot be negative').default(0),
  latching: z.boolean().default(false),
  resetRole: z.enum(RESET_ROLES).nullable().default(null),
  badValueTrip: z.boolean().default(false),
  action: text(500).default(''),
  consequence: text(1000).default(''),
  operatorResponse: text(1000).default(''),
  responseTimeMin: optNum,
  severity: z.enum(['minor', 'moderate', 'major', 'severe']),
  analyticalLimit: optNum,
  processSafetyTimeSec: optNum,
  requiredResponseTimeSec: optNum,
  bypassPermitted: z.boolean().default(true),
  maxBypassHours: optNum,
  compensatingMeasures: z.array(text(300).min(1)).max(20).default([]),
  testIntervalMonths: z.number().int().min(1).max(240),
  testGraceDays: z.number().int().min(0).max(365).nullable().default(null),
  codeSetInterval: z.boolean().default(false),
  sil: z
    .union([z.literal(1), z.literal(2), z.literal(3)])
    .nullable()
    .default(null),
  subsystems: z.array(SubsystemSchema).max(3).default([]),
  // Alarm rationalization record (docs/register.md#alarm-rationalization; ISA-18.2 rationalization, from memory)
  alarmType: z.enum(ALARM_TYPES).default('absolute'),
  causes: text(1000).default(''),
  confirmation: text(1000).default(''),
  impactCategory: z.enum(IMPACT_CATEGORIES).nullable().default(null),
  safetyRelatedAlarm: z.boolean().default(false),
  claimedRiskReduction: optNum,
}

type LimitShape = Partial<{
  limitClass: (typeof LIMIT_CLASSES)[number]
  severity: 'minor' | 'moderate' | 'major' | 'severe'
  safetyRelatedAlarm: boolean
  claimedRiskReduction: number | null
  latching: boolean
  resetRole: string | null
  responseTimeMin: number | null
  sil: number | null
  subsystems: Subsystem[]
  bypassPermitted: boolean
  maxBypassHours: number | null
}>

function limitRules<T extends z.ZodType<LimitShape>>(schema: T) {
  return schema.superRefine((v, ctx) => {
    if (v.latching === true && !v.resetRole)
      ctx.addIssue({ code: 'custom', path: ['resetRole'], message: 'Say who may reset a latching limit' })
    for (const e of structuralClassificationErrors(v))
      ctx.addIssue({ code: 'custom', path: [e.field], message: e.message })
    if (v.sil != null && v.subsystems !== undefined) {
      const roles = new Set(v.subsystems.map((s) => s.role))
      if (roles.size !== v.subsystems.length)
        ctx.addIssue({ code: 'custom', path: ['subsystems'], message: 'Each subsystem role appears once' })
      if (!['sensor', 'logic', 'final_element'].every((r) => roles.has(r as Subsystem['role']))) {
        ctx.addIssue({
          code: 'custom',
          path: ['subsystems'],
          message: 'A SIL-rated function needs its sensor, logic and final-element subsystems',
        })
      }
    }
    if (v.bypassPermitted === false && v.maxBypassHours != null) {
      ctx.addIssue({
        code: 'custom',
        path: ['maxBypassHours'],
        message: 'No bypass duration when bypassing is not permitted',
      })
    }
  })
}

export const CreateLimitInputSchema = limitRules(z.object(limitFields))
export const UpdateLimitInputSchema = limitRules(z.object(limitFields).omit({ processId: true }).partial())
export type CreateLimitInput = z.infer<typeof CreateLimitInputSchema>
export type UpdateLimitInput = z.infer<typeof UpdateLimitInputSchema>

export const LIMIT_STATUSES = ['proposed', 'active', 'retired'] as const
export const PROTECTION_STATES = ['in_service', 'bypassed', 'degraded'] as const
export const TEST_STATUSES = ['never_tested', 'ok', 'due_soon', 'in_grace', 'overdue'] as const

export interface WindowFindingDto {
  code: string
  field?: string
  message: string
}

/** A limit as the API answers it. */
export interface Limit extends Omit<CreateLimitInput, 'testGraceDays'> {
  id: number
  siteId: number
  areaId: number
  processName: string
  areaName: string
  siteCode: string
  testGraceDays: number | null
  priority: 'low' | 'medium' | 'high' | 'critical' | null
  priorityExplanation: string
  status: (typeof LIMIT_STATUSES)[number]
  revision: number
  protectionState: (typeof PROTECTION_STATES)[number]
  testStatus: (typeof TEST_STATUSES)[number]
  testDueDate: string | null
  lastFullPass: string | null
  operatingWindow: { errors: WindowFindingDto[]; warnings: WindowFindingDto[] }
  primaryInstrument: {
    id: number
    tag: string
    unit: string
    measuredVariable: string
    rangeLow: number
    rangeHigh: number
  } | null
  updatedAt: string
}

const queryBool = z.enum(['true', 'false']).transform((v) => v === 'true')

/**
 * Query of `GET /api/limits` and its export: repeated filters, text search, sort, page or cursor. `view=row` answers
 * the register screen's slim rows (`RegisterRow`) instead of whole limits.
 */
export const LimitListQuerySchema = z.object({
  siteId: repeated(IdSchema),
  areaId: repeated(IdSchema),
  processId: repeated(IdSchema),
  instrumentId: repeated(IdSchema),
  limitClass: repeated(z.enum(LIMIT_CLASSES)),
  direction: repeated(z.enum(['high', 'low'])),
  sil: repeated(z.union([z.enum(['1', '2', '3']).transform(Number), z.literal('none')])),
  status: repeated(z.enum(LIMIT_STATUSES)),
  protectionState: repeated(z.enum(PROTECTION_STATES)),
  testStatus: repeated(z.enum(TEST_STATUSES)),
  hasWarnings: queryBool.optional(),
  hasErrors: queryBool.optional(),
  q: z.string().trim().max(100).optional(),
  sort: z.string().max(200).optional(),
  ...PageSchema.shape,
  cursor: z.string().max(300).optional(),
  view: z.enum(['full', 'row']).default('full'),
})
export type LimitListQuery = z.output<typeof LimitListQuerySchema>
/** The register list query as the client writes it (every value as it goes into the query string). */
export type LimitListParams = Partial<Omit<LimitListQuery, 'sil' | 'hasWarnings' | 'hasErrors'>> & {
  sil?: ('1' | '2' | '3' | 'none')[]
  hasWarnings?: 'true' | 'false'
  hasErrors?: 'true' | 'false'
}
/** `GET /api/limits/export`: the register list's filters and sort, and the file format. */
export const LimitExportQuerySchema = LimitListQuerySchema.extend({ format: z.enum(['csv', 'xlsx']).default('csv') })
export type LimitExportFormat = z.output<typeof LimitExportQuerySchema>['format']

/** `PATCH /api/limits/:id`: the revision the editor read, when it asks to be refused a newer one (409). */
export const ExpectedRevisionSchema = z.object({ expectedRevision: z.number().int().optional() })
/** The body of `PATCH /api/limits/:id`: the changed fields and the revision read. */
export type UpdateLimitRequest = UpdateLimitInput & z.infer<typeof ExpectedRevisionSchema>

/** `GET /api/limits/:id/test-signal`: how the signal is injected, and the terminals' temperature for a thermocouple. */
export const TestSignalQuerySchema = z.object({
  coldJunction: z.coerce.number().min(-50).max(150).optional(),
  mode: z.enum(['mv_source', 'tc_simulate']).default('mv_source'),
})
export type TestSignalQuery = Partial<z.output<typeof TestSignalQuerySchema>>

/** `GET /api/alarm-response-sheets`: the booklet of a site, or of one of its areas. */
export const ResponseSheetsQuerySchema = z.object({ siteId: IdSchema, areaId: IdSchema.optional() })
export type ResponseSheetsQuery = z.output<typeof ResponseSheetsQuerySchema>

/** The filters of the register list (and of its export), without paging and sort. */
export type LimitListFilters = Omit<LimitListParams, 'sort' | 'page' | 'pageSize' | 'cursor' | 'view'>

/** One row of the register screen (`GET /api/limits?view=row`): what the table shows, nothing more. */
export interface RegisterRow {
  id: number
  siteId: number
  siteCode: string
  areaName: string
  processName: string
  tag: string
  description: string
  limitClass: Limit['limitClass']
  direction: Limit['direction']
  setpoint: number
  deadband: number
  deadbandUnit: Limit['deadbandUnit']
  sil: Limit['sil']
  priority: Limit['priority']
  status: Limit['status']
  protectionState: Limit['protectionState']
  testStatus: Limit['testStatus']
  testDueDate: string | null
  operatingWindow: Limit['operatingWindow']
  primaryInstrument: Pick<
    NonNullable<Limit['primaryInstrument']>,
    'id' | 'tag' | 'unit' | 'rangeLow' | 'rangeHigh'
  > | null
  instrumentCount: number
}

/** One page of the register; `total` stops counting at 10,000 (`totalCapped`); `nextCursor` for keyset paging. */
export interface LimitPage<T = Limit> {
  items: T[]
  total: number
  totalCapped: boolean
  nextCursor: string | null
}
