import { z } from 'zod'
import { ALARM_EVENT_KINDS, JOURNAL_PRIORITIES } from '../domain/alarm-figures.ts'
import { ALARM_STATE_KINDS, ALARM_STATE_STATUSES, DEFAULT_ALARM_STATE_POLICY } from '../domain/rules/alarm-states.ts'
import { IdSchema, isKnownTimeZone, jsonFormField, ListQuerySchema, VerdictSchema } from './common.ts'

// Alarm journals, alarm-system figures, alarm states and replays (docs/alarms.md, docs/api.md).

/** Site policy for alarm figures and states (defaults: common practice or the standards "from memory"). */
export const AlarmPolicySchema = z.object({
  floodThreshold: z.number().int().min(1).max(1000).default(10),
  chatterCount: z.number().int().min(2).max(100).default(3),
  chatterWindowSec: z.number().positive().max(3600).default(60),
  fleetingSec: z.number().positive().max(600).default(5),
  staleHours: z
    .number()
    .positive()
    .max(24 * 30)
    .default(24),
  shelveMaxHours: z
    .object({
      low: z.number().positive().max(168),
      medium: z.number().positive().max(168),
      high: z.number().positive().max(168),
      critical: z.number().positive().max(168),
    })
    .default(DEFAULT_ALARM_STATE_POLICY.shelveMaxHours),
  outOfServiceMaxHours: z
    .number()
    .positive()
    .max(24 * 90)
    .default(DEFAULT_ALARM_STATE_POLICY.outOfServiceMaxHours),
  /** Operator's time to respond when the limit gives none, seconds. */
  defaultResponseSec: z.number().positive().max(86_400).default(600),
})
export type AlarmPolicy = z.infer<typeof AlarmPolicySchema>
export const DEFAULT_ALARM_POLICY: AlarmPolicy = AlarmPolicySchema.parse({})

const timeZone = z
  .string()
  .trim()
  .min(1, 'Choose the time zone of the file')
  .refine(isKnownTimeZone, { message: 'Unknown time zone (use an IANA name such as Europe/Vienna, or UTC)' })

const jsonText = jsonFormField('The mapping must be a JSON object (file header → column key)')

// ---- alarm journals ----

/** Columns of a journal file after mapping; timestamp, tag and event are required. */
export const JOURNAL_COLUMNS = ['timestamp', 'tag', 'event', 'priority', 'position', 'message'] as const
export type JournalColumn = (typeof JOURNAL_COLUMNS)[number]
export const JOURNAL_REQUIRED_COLUMNS: readonly JournalColumn[] = ['timestamp', 'tag', 'event']

export const JournalMappingSchema = z
  .record(
    z.string().trim().min(1).max(200),
    z.union([
      z.enum(JOURNAL_COLUMNS, 'Map each header to timestamp, tag, event, priority, position or message'),
      z.literal(''),
    ]),
  )
  .refine((m) => Object.keys(m).length <= 200, 'A mapping holds at most 200 headers')
export type JournalMapping = z.infer<typeof JournalMappingSchema>

export const JournalUploadFieldsSchema = z.object({
  siteId: IdSchema,
  timeZone,
  mapping: jsonText.pipe(JournalMappingSchema).optional(),
})

export const UPLOAD_STATUSES = ['queued', 'running', 'done', 'failed'] as const
const Rejection = z.object({ row: z.number().int(), message: z.string() })

export const JournalUploadSchema = z.object({
  id: z.number().int(),
  siteId: z.number().int(),
  fileName: z.string(),
  timeZone: z.string(),
  status: z.enum(UPLOAD_STATUSES),
  rowsRead: z.number().int(),
  rowsStored: z.number().int(),
  rowsDuplicate: z.number().int(),
  rowsRejected: z.number().int(),
  rejections: z.array(Rejection),
  unmatchedTags: z.array(z.string()),
  unmatchedTagCount: z.number().int(),
  duplicateOf: z.number().int().nullable(),
  error: z.string().nullable(),
  firstAt: z.string().nullable(),
  lastAt: z.string().nullable(),
  mapping: z.record(z.string(), z.string()),
  createdAt: z.string(),
  finishedAt: z.string().nullable(),
})
export type JournalUpload = z.infer<typeof JournalUploadSchema>

export const JournalListQuerySchema = ListQuerySchema.extend({ siteId: IdSchema.optional() })

// ---- figures ----

export const AlarmFiguresQuerySchema = z
  .object({
    siteId: IdSchema,
    areaId: IdSchema.optional(),
    position: z.string().trim().max(100).optional(),
    from: z.iso.datetime({ offset: true }).optional(),
    to: z.iso.datetime({ offset: true }).optional(),
  })
  .refine((q) => !q.from || !q.to || Date.parse(q.from) < Date.parse(q.to), {
    message: 'The period must end after it starts',
    path: ['to'],
  })
  .refine((q) => !q.from || !q.to || Date.parse(q.to) - Date.parse(q.from) <= 400 * 86_400_000, {
    message: 'Choose a period of at most 400 days',
    path: ['from'],
  })
export type AlarmFiguresQuery = z.infer<typeof AlarmFiguresQuerySchema>

export const AlarmReportQuerySchema = z.object({
  siteId: IdSchema,
  month: z.string().regex(/^\d{4}-(0[1-9]|1[0-2])$/, 'Give the month as YYYY-MM'),
})

const TagCount = z.object({ tag: z.string(), count: z.number(), limitId: z.number().int().nullable().optional() })
const Target = z.object({ target: z.unknown(), max: z.number().optional(), source: z.string() })

export const AlarmFiguresSchema = z.object({
  siteId: z.number().int(),
  from: z.string(),
  to: z.string(),
  positions: z.array(z.string()),
  positionCount: z.number(),
  annunciated: z.number(),
  hours: z.number(),
  perPositionPerHour: z.number(),
  perPositionPer10Min: z.number(),
  tenMinute: z.object({ start: z.array(z.string()), busiest: z.array(z.number()) }),
  peak10Min: z.number(),
  floodPeriods: z.number(),
  periods: z.number(),
  floodShare: z.number(),
  longestFlood: z
    .object({
      position: z.string(),
      start: z.string(),
      end: z.string(),
      annunciated: z.number(),
      top: z.array(TagCount),
    })
    .nullable(),
  badActors: z.array(TagCount),
  badActorShare: z.number(),
  chattering: z.array(z.object({ tag: z.string(), episodes: z.number(), limitId: z.number().int().nullable() })),
  fleeting: z.array(TagCount),
  fleetingCount: z.number(),
  stale: z.array(z.object({ tag: z.string(), since: z.string(), hours: z.number() })),
  standing: z.array(z.string()),
  priority: z.record(z.enum([...JOURNAL_PRIORITIES, 'unknown']), z.number()),
  states: z.record(z.enum(ALARM_STATE_KINDS), z.object({ count: z.number(), hours: z.number() })),
  targets: z.record(z.string(), Target),
  policy: AlarmPolicySchema,
  findings: z.object({
    unmatchedTags: z.array(z.string()),
    shelvesWithoutRecord: z.array(z.object({ tag: z.string(), at: z.string() })),
  }),
})
export type AlarmFigures = z.infer<typeof AlarmFiguresSchema>

// ---- alarm states ----

export const AlarmStateInputSchema = z.object({
  siteId: IdSchema,
  tag: z.string().trim().min(1, 'Enter the alarm tag').max(100),
  kind: z.enum(ALARM_STATE_KINDS),
  reason: z.string().trim().min(3, 'Say why').max(2000),
  hours: z
    .number()
    .positive('Give a duration of more than zero hours')
    .max(24 * 90),
  changeRequestId: IdSchema.nullable().optional(),
  password: z.string().max(200).optional(),
})
export type AlarmStateInput = z.infer<typeof AlarmStateInputSchema>

export const AlarmStateEndSchema = z.object({ note: z.string().trim().min(3, 'Write the record').max(2000) })

export const AlarmStateListQuerySchema = ListQuerySchema.extend({
  siteId: IdSchema.optional(),
  status: z.enum(ALARM_STATE_STATUSES).optional(),
  overdue: z.enum(['true', 'false']).optional(),
})

export const AlarmStateSchema = z.object({
  id: z.number().int(),
  siteId: z.number().int(),
  limitId: z.number().int().nullable(),
  tag: z.string(),
  kind: z.enum(ALARM_STATE_KINDS),
  status: z.enum(ALARM_STATE_STATUSES),
  reason: z.string(),
  startedBy: z.object({ id: z.number().int(), name: z.string() }),
  startedAt: z.string(),
  until: z.string(),
  overdue: z.boolean(),
  signed: z.boolean(),
  changeRequestId: z.number().int().nullable(),
  endedBy: z.object({ id: z.number().int(), name: z.string() }).nullable(),
  endedAt: z.string().nullable(),
  endNote: z.string().nullable(),
  /** The rule book's answer to each action for the user who asked (shared/domain/rules/alarm-states.ts). */
  actions: z.object({ end: VerdictSchema }),
})
export type AlarmState = z.infer<typeof AlarmStateSchema>

// ---- replays ----

export const ReplayUploadFieldsSchema = z.object({
  siteId: IdSchema,
  instrumentId: IdSchema.optional(),
  timeZone,
})

export const ReplayUploadSchema = z.object({
  id: z.number().int(),
  siteId: z.number().int(),
  instrumentId: z.number().int().nullable(),
  fileName: z.string(),
  timeZone: z.string(),
  status: z.enum(UPLOAD_STATUSES),
  series: z.array(z.object({ index: z.number().int(), name: z.string() })),
  rowsRead: z.number().int(),
  samplesStored: z.number().int(),
  rowsRejected: z.number().int(),
  rejections: z.array(Rejection),
  error: z.string().nullable(),
  firstAt: z.string().nullable(),
  lastAt: z.string().nullable(),
  createdAt: z.string(),
})
export type ReplayUpload = z.infer<typeof ReplayUploadSchema>

export const ReplayListQuerySchema = ListQuerySchema.extend({ siteId: IdSchema.optional() })

export const ReplayRunInputSchema = z.object({
  /** The series (column) holding the instrument's value; defaults to the one named like the instrument. */
  series: z.number().int().min(0).optional(),
  limitId: IdSchema.optional(),
  whatIf: z
    .object({
      deadband: z.number().min(0).max(1e9),
      onDelaySec: z.number().min(0).max(86_400),
      offDelaySec: z.number().min(0).max(86_400),
    })
    .optional(),
})
export type ReplayRunInput = z.infer<typeof ReplayRunInputSchema>

const ReplayOutcome = z.object({
  deadband: z.number(),
  onDelaySec: z.number(),
  offDelaySec: z.number(),
  activations: z.array(z.string()),
  returns: z.array(z.string()),
  firstResetAllowed: z.array(z.string().nullable()),
  timeInAlarmSec: z.number(),
  chatterEpisodes: z.number(),
  firstActivationDelaySec: z.number().nullable(),
})

export const ReplayRunSchema = z.object({
  uploadId: z.number().int(),
  series: z.object({ index: z.number().int(), name: z.string() }),
  samples: z.number().int(),
  trend: z.object({ t: z.array(z.string()), v: z.array(z.number().nullable()) }),
  limits: z.array(
    z.object({
      limitId: z.number().int(),
      tag: z.string(),
      direction: z.enum(['high', 'low']),
      setpoint: z.number(),
      latching: z.boolean(),
      responseSec: z.number(),
      before: ReplayOutcome,
      after: ReplayOutcome.nullable(),
      suggestion: ReplayOutcome.nullable(),
    }),
  ),
})
export type ReplayRun = z.infer<typeof ReplayRunSchema>

export { ALARM_EVENT_KINDS }
