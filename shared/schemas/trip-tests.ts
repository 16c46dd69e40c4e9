import { z } from 'zod'

const num = z
  .union([
    z.number(),
    z
      .string()
      .trim()
      .regex(/^-?\d+(\.\d+)?$/, 'Enter a number'),
  ])
  .transform(Number)
  .refine(Number.isFinite, 'Enter a number')
const optNum = z
  .union([num, z.null(), z.literal('').transform(() => null)])
  .optional()
  .transform((v) => v ?? null)
const optBool = z.boolean().nullable().default(null)

export const TEST_METHODS = ['injection', 'process', 'setpoint_lowered', 'reference_gauge'] as const
export const SIGNATURE_MEANINGS = ['performed', 'witnessed', 'accepted'] as const

/** A trip test as recorded in the field (DOMAIN.md §3 TripTest). */
export const TripTestInputSchema = z
  .object({
    limitId: z.number().int().positive(),
    kind: z.enum(['full', 'partial']),
    method: z.enum(TEST_METHODS),
    injectionPoint: z.enum(['sensor', 'transmitter_output']).nullable().default(null),
    sourceMode: z.enum(['mv_source', 'tc_simulate']).nullable().default(null),
    coldJunctionC: optNum,
    procedureRef: z.string().trim().max(120).default(''),
    deviceSerial: z.string().trim().max(120).default(''),
    calibratorId: z.string().trim().max(120).default(''),
    calibratorDueDate: z.iso.date().nullable().default(null),
    workOrder: z.string().trim().max(120).default(''),
    bypassId: z.number().int().positive().nullable().default(null),
    performedAt: z.iso.datetime({ offset: true }),
    /** Tolerance; when absent the site's default (± % of span). */
    tolerance: optNum,
    toleranceUnit: z.enum(['eu', 'percent_span']).default('percent_span'),
    /** Where it tripped in engineering units; null with `noTrip` when it did not trip. */
    asFound: optNum,
    /** Or where it tripped in signal units (mA, mV, ohm, V): converted to engineering units by the server. */
    asFoundSignal: z
      .object({ value: num, unit: z.enum(['mA', 'mV', 'ohm', 'V']) })
      .nullable()
      .default(null),
    noTrip: z.boolean().default(false),
    asLeft: optNum,
    resetValue: optNum,
    latchHeld: optBool,
    resetRefusedWhileActive: optBool,
    resetAcceptedAfterReturn: optBool,
    finalElementOk: optBool,
    responseTimeSec: optNum,
    setpointRestoredReadBack: optNum,
    notes: z.string().trim().max(5000).default(''),
  })
  .superRefine((v, ctx) => {
    const given = [v.asFound !== null, v.asFoundSignal !== null, v.noTrip].filter(Boolean).length
    if (given !== 1)
      ctx.addIssue({
        code: 'custom',
        path: ['asFound'],
        message: 'Enter where it tripped (engineering or signal units), or that it did not trip',
      })
    if (v.method === 'injection' && !v.injectionPoint)
      ctx.addIssue({ code: 'custom', path: ['injectionPoint'], message: 'Say where the signal was injected' })
    if (v.method === 'setpoint_lowered' && v.setpointRestoredReadBack === null) {
      ctx.addIssue({
        code: 'custom',
        path: ['setpointRestoredReadBack'],
        message: 'Read back the restored setpoint from the limiter',
      })
    }
    if (v.method !== 'reference_gauge' && v.method !== 'process' && !v.calibratorId)
      ctx.addIssue({ code: 'custom', path: ['calibratorId'], message: 'Enter the calibrator used' })
    if (v.calibratorId && !v.calibratorDueDate)
      ctx.addIssue({
        code: 'custom',
        path: ['calibratorDueDate'],
        message: "Enter the calibrator's calibration due date",
      })
  })
export type TripTestInput = z.infer<typeof TripTestInputSchema>

export const TripTestSignatureInputSchema = z.object({
  meaning: z.enum(SIGNATURE_MEANINGS),
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})

export const DegradationMeasuresInputSchema = z.object({
  compensatingMeasures: z
    .array(z.string().trim().min(1).max(300))
    .min(1, 'Record at least one compensating measure')
    .max(20),
  repairDeadline: z.iso.date(),
  password: z.string().min(1, 'Enter your password to sign').max(128),
})

export interface TripTestDto {
  id: number
  limitId: number
  limitTag: string
  siteId: number
  limitRevision: number
  kind: 'full' | 'partial'
  method: (typeof TEST_METHODS)[number]
  injectionPoint: string | null
  sourceMode: string | null
  coldJunctionC: number | null
  procedureRef: string
  deviceSerial: string
  calibratorId: string
  calibratorDueDate: string | null
  workOrder: string
  bypassId: number | null
  performedAt: string
  setpoint: number
  tolerance: number
  toleranceUnit: 'eu' | 'percent_span'
  toleranceEu: number
  unit: string
  asFound: number | null
  asFoundSignal: { value: number; unit: string } | null
  asFoundResult: 'in_tolerance' | 'out_safe' | 'out_dangerous' | 'no_trip'
  asLeft: number | null
  asLeftResult: 'in_tolerance' | 'out'
  resetValue: number | null
  latchHeld: boolean | null
  resetRefusedWhileActive: boolean | null
  resetAcceptedAfterReturn: boolean | null
  finalElementOk: boolean | null
  responseTimeSec: number | null
  requiredResponseTimeSec: number | null
  setpointRestoredReadBack: number | null
  passed: boolean
  failReasons: string[]
  notes: string
  status: 'recorded' | 'signed' | 'completed'
  witnessRequired: boolean
  contentHash: string
  recordedBy: string
  signatures: {
    id: number
    userId: number
    name: string
    meaning: string
    at: string
    contentHash: string
    matchesContent: boolean
  }[]
  attachments: { id: number; fileName: string; contentType: string; sizeBytes: number }[]
  createdAt: string
}
