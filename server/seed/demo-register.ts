// The demo plant's register: about 150 limit functions on invented equipment of the two demo sites (Fernhollow
// Refinery, Saltmarsh Polymers). Every row goes through the register's own services, so it passes the operating-window
// check; a handful raise window warnings on purpose so the register has something to show. No real company, product,
// person or vendor model is meant.
import type { Transaction } from 'kysely'
import type { z } from 'zod'
import {
  CreateInstrumentInputSchema,
  CreateLimitInputSchema,
  type Limit,
  type Subsystem,
} from '../../shared/schemas/register.ts'
import type { Clock } from '../clock.ts'
import type { Database } from '../db/schema.ts'
import type { Role } from '../../shared/schemas/users.ts'
import { type AuditContext, appendAudit } from '../features/audit/audit.repository.ts'
import { insertInstrument } from '../features/register/instruments.service.ts'
import { findInstrumentIdsByLimitIds, listLimits } from '../features/register/limits.repository.ts'
import { insertLimit } from '../features/register/limits.service.ts'
import { limitSnapshot, toLimit, toProcess } from '../features/register/register.mappers.ts'

type Trx = Transaction<Database>
type InstrumentSpec = Omit<z.input<typeof CreateInstrumentInputSchema>, 'processId'>
type LimitFields = Omit<z.input<typeof CreateLimitInputSchema>, 'processId' | 'instrumentIds'>
type Severity = LimitFields['severity']
type ResetRole = 'operator' | 'shift_supervisor'

/** A limit of the demo register, its instruments named by tag (the first is the primary), and where it ends up. */
interface LimitSpec extends LimitFields {
  on: string[]
  status: 'active' | 'proposed' | 'retired'
  retiredReason?: string
}

interface ProcessSpec {
  site: 'FHR' | 'SMP'
  area: string
  name: string
  description: string
  instruments: InstrumentSpec[]
  limits: LimitSpec[]
}

// ---- instrument building blocks ----

type Range = [number, number]
type Band = [number | null, number | null]
interface InstOpts {
  normal?: Band
  design?: Band
  burnout?: 'upscale' | 'downscale' | 'none'
  device?: InstrumentSpec['deviceKind']
  text?: string
  ref?: 'gauge' | 'absolute' | 'differential'
  model?: string
}

/** Invented field-device models of the demo plant's shutdown-system transmitters (for observed failure rates). */
function demoModel(variable: InstrumentSpec['measuredVariable'], signal: InstrumentSpec['signal']): string {
  if (signal.kind === 'thermocouple' || signal.kind === 'rtd') return 'HT-40 head-mounted temperature transmitter'
  if (signal.kind === 'switch') return 'SW-3 process switch'
  if (variable === 'pressure') return 'PX-7 pressure transmitter'
  if (variable === 'flow') return 'PX-7D differential-pressure transmitter'
  if (variable === 'level') return 'LR-2 radar level transmitter'
  return ''
}

function inst(
  tag: string,
  measuredVariable: InstrumentSpec['measuredVariable'],
  unit: string,
  range: Range,
  signal: InstrumentSpec['signal'],
  o: InstOpts = {},
): InstrumentSpec {
  return {
    tag,
    measuredVariable,
    unit,
    pressureReference: measuredVariable === 'pressure' ? (o.ref ?? 'gauge') : null,
    rangeLow: range[0],
    rangeHigh: range[1],
    normalLow: o.normal?.[0] ?? null,
    normalHigh: o.normal?.[1] ?? null,
    designLow: o.design?.[0] ?? null,
    designHigh: o.design?.[1] ?? null,
    burnout:
      o.burnout ??
      (signal.kind === 'switch'
        ? 'none'
        : signal.kind === 'thermocouple' || signal.kind === 'rtd'
          ? 'upscale'
          : 'downscale'),
    signal,
    deviceKind: o.device ?? (signal.kind === 'switch' ? 'switch' : 'control_system'),
    deviceDescription: o.text ?? '',
    model: o.model ?? (o.device === 'safety_plc' ? demoModel(measuredVariable, signal) : ''),
  }
}

const tc = (tcType: 'K' | 'N' | 'J' | 'S' | 'R', headTransmitter = false) =>
  ({ kind: 'thermocouple', tcType, headTransmitter }) as const
const pt100 = (wires: 2 | 3 | 4, headTransmitter = false) =>
  ({ kind: 'rtd', element: 'Pt100', wires, headTransmitter }) as const
const mA = (sqrtExtraction = false) => ({ kind: 'current', sqrtExtraction }) as const
const volts = (low: 0 | 1, high: 5 | 10) => ({ kind: 'voltage', low, high }) as const
const contact = { kind: 'switch' } as const

const SIS_FHR = 'Safety PLC SIS-1 (refinery shutdown system), analog input'
const SIS_SMP = 'Safety PLC SIS-5 (polymer plant shutdown system), analog input'

// ---- limit building blocks ----

interface AlarmOpts {
  rt: number
  sev: Severity
  text: string
  response: string
  consequence?: string
  delay?: number
  test?: number
  status?: LimitSpec['status']
  retiredReason?: string
  /** 'alert' for a condition not urgent enough for an alarm. */
  cls?: 'alarm' | 'alert'
  causes?: string
  confirm?: string
  impact?: LimitFields['impactCategory']
  /** A safety-related alarm credited as a protection layer: the risk reduction claimed (≤ 10). */
  safetyRrf?: number
}

/** An alarm (or an alert): asks the operator to act within `rt` minutes. */
function alarm(
  tag: string,
  on: string,
  direction: 'high' | 'low',
  setpoint: number,
  deadband: number,
  o: AlarmOpts,
): LimitSpec {
  return {
    tag,
    on: [on],
    direction,
    limitClass: o.cls ?? 'alarm',
    setpoint,
    deadband,
    onDelaySec: o.delay ?? 0,
    offDelaySec: 0,
    latching: false,
    description: o.text,
    operatorResponse: o.response,
    causes: o.causes ?? '',
    confirmation: o.confirm ?? '',
    impactCategory: o.impact ?? null,
    safetyRelatedAlarm: o.safetyRrf !== undefined,
    claimedRiskReduction: o.safetyRrf ?? null,
    consequence: o.consequence ?? '',
    responseTimeMin: o.rt,
    severity: o.sev,
    testIntervalMonths: o.test ?? 24,
    status: o.status ?? 'active',
    retiredReason: o.retiredReason,
  }
}

interface TripOpts {
  sev: Severity
  text: string
  action: string
  consequence: string
  al: number
  pst: number
  rrt: number
  measures: string[]
  reset?: ResetRole | null
  bypassH?: number | null
  test?: number
  codeSet?: boolean
  grace?: number
  badValue?: boolean
  delay?: number
  sil?: 1 | 2 | 3
  subsystems?: Subsystem[]
  status?: LimitSpec['status']
}

/** A trip: acts by itself; latching with a named reset role unless `reset: null`. */
function trip(
  tag: string,
  on: string[],
  direction: 'high' | 'low',
  setpoint: number,
  deadband: number,
  o: TripOpts,
): LimitSpec {
  const latching = o.reset !== null
  const bypassPermitted = o.bypassH !== null
  return {
    tag,
    on,
    direction,
    limitClass: 'trip',
    setpoint,
    deadband,
    onDelaySec: o.delay ?? 0,
    offDelaySec: 0,
    latching,
    resetRole: latching ? (o.reset ?? 'operator') : null,
    badValueTrip: o.badValue ?? true,
    description: o.text,
    action: o.action,
    consequence: o.consequence,
    severity: o.sev,
    analyticalLimit: o.al,
    processSafetyTimeSec: o.pst,
    requiredResponseTimeSec: o.rrt,
    bypassPermitted,
    maxBypassHours: bypassPermitted ? (o.bypassH ?? 8) : null,
    compensatingMeasures: o.measures,
    testIntervalMonths: o.test ?? 12,
    codeSetInterval: o.codeSet ?? false,
    testGraceDays: o.grace ?? null,
    sil: o.sil ?? null,
    subsystems: o.subsystems ?? [],
    status: o.status ?? 'active',
  }
}

/** One SIF subsystem: voting, λDU per hour, β, MTTR h, proof-test interval months, coverage, mission time years. */
function sub(
  role: Subsystem['role'],
  architecture: Subsystem['architecture'],
  lambdaDu: number,
  beta: number,
  mttrHours: number,
  testIntervalMonths: number,
  testCoverage: number,
  missionTimeYears: number,
): Subsystem {
  return { role, architecture, lambdaDu, beta, mttrHours, testIntervalMonths, testCoverage, missionTimeYears }
}
const safetyPlc = (test = 24) => sub('logic', '1oo1', 1e-7, 0.02, 8, test, 0.95, 15)
const redundantPlc = sub('logic', '1oo2', 2e-7, 0.02, 8, 24, 0.95, 10)
const valves1oo2 = (lambdaDu = 2.5e-6, test = 12) => sub('final_element', '1oo2', lambdaDu, 0.1, 48, test, 0.85, 15)
const valve1oo1 = (lambdaDu = 2e-6, test = 12) => sub('final_element', '1oo1', lambdaDu, 0.1, 48, test, 0.8, 15)

/** Bearing or winding temperatures of rotating equipment: an alarm per point and, optionally, a trip per point. */
function machineTemps(
  points: { tag: string; where: string }[],
  equipment: string,
  range: Range,
  normal: Band,
  designHigh: number,
  alarmAt: number,
  tripAt: number | null,
  o: { wires?: 2 | 3 | 4; device?: InstrumentSpec['deviceKind']; text?: string; al?: number; stop?: string } = {},
) {
  const instruments = points.map((p) =>
    inst(p.tag, 'temperature', '°C', range, pt100(o.wires ?? 3), {
      normal,
      design: [null, designHigh],
      device: o.device,
      text: o.text ?? 'Pt100 embedded in the bearing shell, RTD input card',
    }),
  )
  const limits: LimitSpec[] = []
  for (const p of points) {
    const n = p.tag.replace(/^TT-/, '')
    limits.push(
      alarm(`TAH-${n}`, p.tag, 'high', alarmAt, 2, {
        rt: 10,
        sev: 'moderate',
        text: `${equipment} ${p.where} temperature high`,
        response:
          'Check lube oil flow and temperature, listen for noise, ask the field operator to check vibration; prepare to change over to the spare',
        consequence: 'Bearing damage and an unplanned machine stop',
      }),
    )
    if (tripAt !== null) {
      limits.push(
        trip(`TSHH-${n}`, [p.tag], 'high', tripAt, 3, {
          sev: 'major',
          text: `${equipment} ${p.where} temperature high-high`,
          action: o.stop ?? `Stop ${equipment} (motor contactor opens)`,
          consequence: 'Bearing seizure, seal failure and release of process fluid',
          al: o.al ?? tripAt + 15,
          pst: 600,
          rrt: 10,
          measures: [
            'Field operator checks the bearing by hand-held thermometer every 30 min',
            'Spare machine lined up and ready to start',
          ],
          bypassH: 12,
          test: 24,
        }),
      )
    }
  }
  return { instruments, limits }
}

// ---- Fernhollow Refinery ----

const H101 = machineTemps(
  [
    { tag: 'TT-110A', where: 'drive-end bearing' },
    { tag: 'TT-110B', where: 'non-drive-end bearing' },
  ],
  'crude charge pump P-102A',
  [0, 150],
  [35, 75],
  120,
  85,
  95,
  { al: 110 },
)
const K203 = machineTemps(
  [
    { tag: 'TT-230A', where: 'drive-end journal bearing' },
    { tag: 'TT-230B', where: 'active thrust bearing' },
  ],
  'recycle gas compressor K-203',
  [0, 150],
  [60, 95],
  130,
  110,
  120,
  { device: 'other', text: 'Pt100 in the bearing babbitt, machinery protection system', al: 130 },
)
const P340 = machineTemps(
  [
    { tag: 'TT-340A', where: 'drive-end bearing' },
    { tag: 'TT-340B', where: 'non-drive-end bearing' },
  ],
  'transfer pump P-340',
  [0, 150],
  [30, 70],
  120,
  85,
  95,
  { al: 110 },
)

const FHR: ProcessSpec[] = [
  {
    site: 'FHR',
    area: 'Crude Unit',
    name: 'Crude charge heater H-101',
    description: 'Natural-draught box heater, two passes, heats desalted crude to the atmospheric column',
    instruments: [
      ...['A', 'B', 'C'].map((x) =>
        inst(`TT-101${x}`, 'temperature', '°C', [0, 600], tc('K', true), {
          normal: [330, 362],
          design: [null, 400],
          device: 'safety_plc',
          text: `Heater outlet transfer line, thermowell ${x}; ${SIS_FHR}`,
        }),
      ),
      inst('TT-102A', 'temperature', '°C', [0, 1000], tc('N'), {
        normal: [450, 540],
        design: [null, 650],
        text: 'Tube skin thermocouple, pass 1 radiant outlet',
      }),
      inst('TT-102B', 'temperature', '°C', [0, 1000], tc('N'), {
        normal: [450, 540],
        design: [null, 650],
        text: 'Tube skin thermocouple, pass 2 radiant outlet',
      }),
      inst('TT-103', 'temperature', '°C', [0, 1200], tc('K'), {
        normal: [700, 820],
        design: [null, 950],
        device: 'limit_controller',
        text: 'Bridgewall temperature, panel-mounted latching temperature limiter',
      }),
      inst('PT-104', 'pressure', 'bar', [0, 6], mA(), {
        normal: [1.2, 2.4],
        device: 'safety_plc',
        text: `Fuel gas to burners, downstream of the control valve; ${SIS_FHR}`,
      }),
      inst('FT-105A', 'flow', 'm³/h', [0, 120], mA(true), {
        normal: [70, 95],
        device: 'safety_plc',
        text: 'Orifice plate and differential-pressure transmitter, pass 1 inlet',
      }),
      inst('FT-105B', 'flow', 'm³/h', [0, 120], mA(true), {
        normal: [70, 95],
        device: 'safety_plc',
        text: 'Orifice plate and differential-pressure transmitter, pass 2 inlet',
      }),
    ],
    limits: [
      alarm('TAH-101A', 'TT-101A', 'high', 370, 3, {
        rt: 5,
        sev: 'major',
        text: 'Crude heater outlet temperature high',
        response: 'Reduce firing; check both pass flows and the fuel gas pressure controller',
        consequence: 'Coking of the heater tubes and the transfer line',
      }),
      trip('TSHH-101', ['TT-101A', 'TT-101B', 'TT-101C'], 'high', 385, 5, {
        sev: 'severe',
        text: 'Crude heater outlet temperature high-high, 2oo3',
        action: 'Close fuel gas shut-off valves XV-106A/B and pilot gas valve XV-107',
        consequence: 'Cracking and coking in the transfer line, tube rupture and heater fire',
        al: 400,
        pst: 120,
        rrt: 20,
        reset: 'shift_supervisor',
        measures: [
          'Dedicated console operator watches the two remaining outlet temperatures',
          'Firing limited to 85 % of design while bypassed',
        ],
        sil: 2,
        subsystems: [sub('sensor', '2oo3', 1.2e-6, 0.05, 24, 12, 0.9, 15), safetyPlc(), valves1oo2()],
      }),
      alarm('TAH-102A', 'TT-102A', 'high', 580, 5, {
        rt: 10,
        sev: 'major',
        text: 'Pass 1 tube skin temperature high',
        response: 'Reduce firing on the pass 1 burners; raise pass 1 flow',
        consequence: 'Tube creep and early tube failure',
      }),
      alarm('TAH-102B', 'TT-102B', 'high', 580, 5, {
        rt: 10,
        sev: 'major',
        text: 'Pass 2 tube skin temperature high',
        response: 'Reduce firing on the pass 2 burners; raise pass 2 flow',
        consequence: 'Tube creep and early tube failure',
      }),
      alarm('TAH-103', 'TT-103', 'high', 860, 5, {
        rt: 5,
        sev: 'major',
        text: 'Crude heater bridgewall temperature high',
        response: 'Reduce firing; check excess air and burner flames',
        consequence: 'Overfiring of the radiant section',
      }),
      trip('TSHH-103', ['TT-103'], 'high', 900, 10, {
        sev: 'major',
        text: 'Crude heater bridgewall over-temperature limiter',
        action: 'Limiter opens the fuel gas shut-off valve circuit; heater trips',
        consequence: 'Refractory and tube support damage, tube rupture',
        al: 930,
        pst: 300,
        rrt: 15,
        reset: 'shift_supervisor',
        codeSet: true,
        grace: 0,
        measures: [
          'Console operator watches the bridgewall temperature on the control system',
          'Firing limited to 80 % of design',
        ],
      }),
      alarm('PAL-104', 'PT-104', 'low', 0.9, 0.05, {
        rt: 3,
        sev: 'major',
        text: 'Crude heater fuel gas pressure low',
        response: 'Check the fuel gas supply and knock-out drum; reduce load before burners become unstable',
      }),
      trip('PSLL-104', ['PT-104'], 'low', 0.6, 0.05, {
        sev: 'severe',
        text: 'Crude heater fuel gas pressure low-low',
        action: 'Close fuel gas shut-off valves XV-106A/B',
        consequence: 'Flame-out and accumulation of unburnt gas in the firebox',
        al: 0.45,
        pst: 10,
        rrt: 3,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: [
          'Field operator at the burner front watching the flames',
          'Local manual trip button tested before the bypass',
        ],
        bypassH: 4,
      }),
      trip('PSHH-104', ['PT-104'], 'high', 3.2, 0.1, {
        sev: 'major',
        text: 'Crude heater fuel gas pressure high-high',
        action: 'Close fuel gas shut-off valves XV-106A/B',
        consequence: 'Flame lift-off and overfiring',
        al: 3.6,
        pst: 15,
        rrt: 3,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: [
          'Field operator at the burner front watching the flames',
          'Fuel gas control valve limited to 60 % open',
        ],
        bypassH: 4,
      }),
      alarm('FAL-105A', 'FT-105A', 'low', 55, 2, {
        rt: 5,
        sev: 'major',
        text: 'Crude heater pass 1 flow low',
        response: 'Check the pass flow controller and the charge pump; balance the passes',
      }),
      alarm('FAL-105B', 'FT-105B', 'low', 55, 2, {
        rt: 5,
        sev: 'major',
        text: 'Crude heater pass 2 flow low',
        response: 'Check the pass flow controller and the charge pump; balance the passes',
      }),
      trip('FSLL-105A', ['FT-105A'], 'low', 40, 2, {
        sev: 'severe',
        text: 'Crude heater pass 1 flow low-low',
        action: 'Close fuel gas shut-off valves XV-106A/B; heater trips',
        consequence: 'Tube overheating and rupture of the pass 1 coil',
        al: 35,
        pst: 90,
        rrt: 15,
        reset: 'shift_supervisor',
        measures: ['Console operator watches pass 1 flow and skin temperature', 'Firing limited to 80 % of design'],
      }),
      trip('FSLL-105B', ['FT-105B'], 'low', 40, 2, {
        sev: 'severe',
        text: 'Crude heater pass 2 flow low-low',
        action: 'Close fuel gas shut-off valves XV-106A/B; heater trips',
        consequence: 'Tube overheating and rupture of the pass 2 coil',
        al: 35,
        pst: 90,
        rrt: 15,
        reset: 'shift_supervisor',
        measures: ['Console operator watches pass 2 flow and skin temperature', 'Firing limited to 80 % of design'],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Crude Unit',
    name: 'Crude charge pump P-102A',
    description: 'Centrifugal pump, 250 kW motor, feeds crude through the preheat train',
    instruments: [
      ...H101.instruments,
      // the design pressure lies above the transmitter's range: the window check says the sensor cannot see it
      inst('PT-111', 'pressure', 'bar', [0, 40], mA(), {
        normal: [18, 24],
        design: [null, 45],
        text: 'Pump discharge pressure',
      }),
    ],
    limits: [
      ...H101.limits,
      alarm('PAL-111', 'PT-111', 'low', 14, 0.5, {
        rt: 10,
        sev: 'moderate',
        text: 'Crude charge pump discharge pressure low',
        response: 'Check suction strainer and tank level; start the spare pump P-102B',
      }),
      alarm('PAH-111', 'PT-111', 'high', 28, 0.5, {
        rt: 10,
        sev: 'moderate',
        text: 'Crude charge pump discharge pressure high',
        response: 'Check that the preheat train block valves are open',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Crude Unit',
    name: 'Desalter V-103',
    description: 'Two-stage electrostatic desalter',
    instruments: [
      inst('LT-130', 'level', '%', [0, 100], mA(), {
        normal: [40, 60],
        device: 'safety_plc',
        text: 'Oil-water interface, guided-wave radar',
      }),
      inst('PT-131', 'pressure', 'bar', [0, 25], mA(), {
        normal: [9, 12],
        design: [null, 16],
        text: 'Desalter pressure',
      }),
    ],
    limits: [
      alarm('LAH-130', 'LT-130', 'high', 70, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Desalter interface level high',
        response: 'Raise the brine draw-off; check the mix valve pressure drop',
      }),
      alarm('LAL-130', 'LT-130', 'low', 30, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Desalter interface level low',
        response: 'Reduce the brine draw-off; watch for oil in the brine',
      }),
      trip('LSHH-130', ['LT-130'], 'high', 82, 2, {
        sev: 'major',
        text: 'Desalter interface level high-high',
        action: 'De-energize the desalter transformers',
        consequence: 'Water reaches the electrode grids, arcing and transformer damage',
        al: 90,
        pst: 300,
        rrt: 5,
        reset: 'operator',
        measures: ['Console operator watches the interface level and the transformer current'],
      }),
      alarm('PAH-131', 'PT-131', 'high', 13.5, 0.3, {
        rt: 10,
        sev: 'major',
        text: 'Desalter pressure high',
        response: 'Check the downstream pressure controller; reduce charge',
      }),
      alarm('PAL-131', 'PT-131', 'low', 7, 0.3, {
        rt: 10,
        sev: 'major',
        text: 'Desalter pressure low',
        response: 'Raise the back-pressure set point; watch for vapour in the vessel',
      }),
      trip('PSLL-131', ['PT-131'], 'low', 5, 0.3, {
        sev: 'major',
        text: 'Desalter pressure low-low',
        action: 'De-energize the desalter transformers',
        consequence: 'Crude flashes in the vessel; vapour space around energized grids',
        al: 4,
        pst: 120,
        rrt: 5,
        reset: 'operator',
        measures: ['Console operator watches the desalter pressure'],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Crude Unit',
    name: 'Atmospheric column C-104',
    description: 'Crude distillation column, 42 trays',
    instruments: [
      inst('PT-140', 'pressure', 'bar', [0, 4], mA(), {
        normal: [0.8, 1.3],
        design: [null, 3.5],
        device: 'safety_plc',
        text: `Overhead pressure; ${SIS_FHR}`,
      }),
      inst('LT-141', 'level', '%', [0, 100], mA(), {
        normal: [40, 65],
        device: 'safety_plc',
        text: 'Column bottoms level, differential pressure with remote seals',
      }),
      inst('TT-142', 'temperature', '°C', [0, 200], pt100(4, true), {
        normal: [105, 125],
        text: 'Overhead vapour line',
      }),
    ],
    limits: [
      alarm('PAH-140', 'PT-140', 'high', 1.8, 0.05, {
        rt: 5,
        sev: 'major',
        text: 'Column overhead pressure high',
        response: 'Check overhead condenser fans and the off-gas route; reduce heater firing',
      }),
      trip('PSHH-140', ['PT-140'], 'high', 2.6, 0.1, {
        sev: 'severe',
        text: 'Column overhead pressure high-high (new function from the hazard study revalidation)',
        action: 'Trip crude charge heater H-101 fuel gas',
        consequence: 'Column relief valves lift to flare; flare overload',
        al: 3,
        pst: 240,
        rrt: 30,
        reset: 'shift_supervisor',
        measures: [
          'Console operator watches overhead pressure on a second transmitter',
          'Heater firing limited to 80 % of design',
        ],
        sil: 1,
        subsystems: [sub('sensor', '1oo1', 1e-6, 0.05, 24, 12, 0.9, 15), safetyPlc(), valve1oo1()],
        status: 'proposed',
      }),
      alarm('LAH-141', 'LT-141', 'high', 78, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Column bottoms level high',
        response: 'Raise bottoms draw; check the bottoms pump',
      }),
      alarm('LAL-141', 'LT-141', 'low', 25, 2, {
        rt: 5,
        sev: 'moderate',
        text: 'Column bottoms level low',
        response: 'Reduce bottoms draw; check the crude charge',
      }),
      trip('LSLL-141', ['LT-141'], 'low', 12, 2, {
        sev: 'major',
        text: 'Column bottoms level low-low',
        action: 'Stop bottoms pumps P-106A/B',
        consequence: 'Pump runs dry, seal failure and hot oil release',
        al: 8,
        pst: 180,
        rrt: 10,
        reset: null,
        measures: ['Field operator stands by at the bottoms pumps'],
      }),
      alarm('TAH-142', 'TT-142', 'high', 135, 2, {
        rt: 15,
        sev: 'minor',
        text: 'Column overhead temperature high',
        response: 'Raise reflux',
        status: 'retired',
        retiredReason: 'removed in the alarm rationalization: no operator action beyond normal control',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Crude Unit',
    name: 'Overhead accumulator V-105',
    description: 'Reflux drum of the atmospheric column',
    instruments: [
      inst('LT-150', 'level', '%', [0, 100], mA(), {
        normal: [35, 60],
        device: 'safety_plc',
        text: 'Accumulator level, guided-wave radar',
      }),
    ],
    limits: [
      alarm('LAH-150', 'LT-150', 'high', 75, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Overhead accumulator level high',
        response: 'Raise naphtha draw; check the reflux pump',
      }),
      trip('LSHH-150', ['LT-150'], 'high', 88, 2, {
        sev: 'major',
        text: 'Overhead accumulator level high-high',
        action: 'Stop off-gas compressor K-106',
        consequence: 'Liquid carry-over into the off-gas compressor',
        al: 92,
        pst: 300,
        rrt: 10,
        reset: 'operator',
        measures: ['Console operator watches the accumulator level'],
        status: 'proposed',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'Hydrotreater reactor R-201',
    description: 'Two-bed fixed-bed reactor with hydrogen quench between the beds',
    instruments: [
      ...['A', 'B', 'C'].map((x) =>
        inst(`TT-201${x}`, 'temperature', '°C', [0, 600], tc('K', true), {
          normal: [330, 380],
          design: [null, 427],
          device: 'safety_plc',
          text: `Bed 1 outlet, multipoint thermowell ${x}; ${SIS_FHR}`,
        }),
      ),
      ...['A', 'B'].map((x) =>
        inst(`TT-202${x}`, 'temperature', '°C', [0, 600], tc('K', true), {
          normal: [340, 390],
          design: [null, 427],
          device: 'safety_plc',
          text: `Bed 2 outlet, thermowell ${x}; ${SIS_FHR}`,
        }),
      ),
      inst('PT-210', 'pressure', 'bar', [0, 100], mA(), {
        normal: [60, 68],
        design: [null, 80],
        device: 'safety_plc',
        text: 'Reactor inlet pressure',
      }),
      inst('PDT-211', 'pressure', 'kPa', [0, 500], mA(), {
        ref: 'differential',
        normal: [80, 200],
        text: 'Pressure drop across both catalyst beds',
      }),
    ],
    limits: [
      alarm('TAH-201A', 'TT-201A', 'high', 395, 3, {
        rt: 5,
        sev: 'severe',
        text: 'Reactor bed 1 outlet temperature high',
        response: 'Open bed 1 quench; reduce reactor inlet temperature',
        consequence: 'Temperature runaway in the catalyst bed',
      }),
      trip('TSHH-201', ['TT-201A', 'TT-201B', 'TT-201C'], 'high', 410, 5, {
        sev: 'severe',
        text: 'Reactor bed 1 temperature high-high, 2oo3',
        action: 'Open emergency depressuring valve XV-215 to flare and trip charge heater H-202',
        consequence: 'Temperature runaway, reactor wall above design temperature, loss of containment of hydrogen',
        al: 420,
        pst: 180,
        rrt: 30,
        reset: 'shift_supervisor',
        measures: [
          'Console operator watches all bed temperatures with a second operator assigned',
          'Manual depressuring button verified before the bypass',
        ],
        sil: 2,
        subsystems: [sub('sensor', '2oo3', 1.5e-6, 0.05, 24, 12, 0.9, 15), safetyPlc(), valves1oo2(1.2e-6)],
      }),
      alarm('TAH-202A', 'TT-202A', 'high', 400, 3, {
        rt: 5,
        sev: 'severe',
        text: 'Reactor bed 2 outlet temperature high',
        response: 'Open bed 2 quench; reduce reactor inlet temperature',
      }),
      trip('TSHH-202', ['TT-202A', 'TT-202B'], 'high', 415, 5, {
        sev: 'severe',
        text: 'Reactor bed 2 temperature high-high, 1oo2',
        action: 'Open emergency depressuring valve XV-215 to flare',
        consequence: 'Temperature runaway in bed 2',
        al: 422,
        pst: 180,
        rrt: 30,
        reset: 'shift_supervisor',
        measures: [
          'Console operator watches bed 2 temperatures',
          'Manual depressuring button verified before the bypass',
        ],
        sil: 1,
        subsystems: [sub('sensor', '1oo2', 1.5e-6, 0.1, 24, 12, 0.9, 15), safetyPlc(), valve1oo1(1.2e-6)],
      }),
      alarm('PAH-210', 'PT-210', 'high', 72, 1, {
        rt: 5,
        sev: 'major',
        text: 'Reactor inlet pressure high',
        response: 'Reduce make-up hydrogen; check the recycle gas compressor',
      }),
      trip('PSHH-210', ['PT-210'], 'high', 76, 1, {
        sev: 'severe',
        text: 'Reactor inlet pressure high-high',
        action: 'Stop make-up hydrogen compressors K-207A/B',
        consequence: 'Reactor loop above design pressure; relief to flare',
        al: 80,
        pst: 120,
        rrt: 10,
        reset: 'operator',
        measures: ['Console operator watches reactor pressure', 'Make-up hydrogen limited by hand'],
      }),
      alarm('PDAH-211', 'PDT-211', 'high', 280, 10, {
        rt: 20,
        sev: 'moderate',
        text: 'Reactor pressure drop high',
        response: 'Check for bed fouling; plan a skim at the next opportunity',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'Reactor charge heater H-202',
    description: 'Vertical cylindrical heater, reactor feed and recycle gas',
    instruments: [
      ...['A', 'B'].map((x) =>
        inst(`TT-220${x}`, 'temperature', '°C', [0, 800], tc('N'), {
          normal: [340, 372],
          design: [null, 450],
          device: 'limit_controller',
          text: `Heater outlet, thermocouple ${x} to the latching temperature limiter`,
        }),
      ),
      inst('TT-221', 'temperature', '°C', [0, 1000], tc('K'), {
        normal: [450, 560],
        design: [null, 650],
        text: 'Coil skin thermocouple, hottest tube',
      }),
      inst('PT-222', 'pressure', 'bar', [0, 6], mA(), {
        normal: [1.5, 2.5],
        device: 'safety_plc',
        text: 'Fuel gas to burners',
      }),
      inst('AT-224', 'analytical', '% O2', [0, 21], mA(), {
        normal: [1.5, 4],
        text: 'Flue gas oxygen, zirconia probe in the stack',
      }),
    ],
    limits: [
      alarm('TAH-220', 'TT-220A', 'high', 385, 3, {
        rt: 5,
        sev: 'major',
        text: 'Reactor charge heater outlet temperature high',
        response: 'Reduce firing',
      }),
      trip('TSHH-220', ['TT-220A', 'TT-220B'], 'high', 400, 5, {
        sev: 'severe',
        text: 'Reactor charge heater outlet over-temperature limiter, 1oo2',
        action: 'Limiter opens the fuel gas shut-off valve circuit',
        consequence: 'Reactor inlet too hot, runaway in bed 1',
        al: 420,
        pst: 180,
        rrt: 15,
        reset: 'shift_supervisor',
        codeSet: true,
        grace: 0,
        measures: ['Console operator watches the outlet temperature', 'Firing limited to 80 % of design'],
      }),
      alarm('TAH-221', 'TT-221', 'high', 600, 5, {
        rt: 10,
        sev: 'major',
        text: 'Reactor charge heater coil skin temperature high',
        response: 'Reduce firing; check burner flame patterns',
      }),
      trip('PSLL-222', ['PT-222'], 'low', 0.7, 0.05, {
        sev: 'severe',
        text: 'Reactor charge heater fuel gas pressure low-low',
        action: 'Close fuel gas shut-off valves XV-223A/B',
        consequence: 'Flame-out and unburnt gas in the firebox',
        al: 0.5,
        pst: 10,
        rrt: 3,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: ['Field operator at the burner front'],
        bypassH: 4,
      }),
      trip('PSHH-222', ['PT-222'], 'high', 3.4, 0.1, {
        sev: 'major',
        text: 'Reactor charge heater fuel gas pressure high-high',
        action: 'Close fuel gas shut-off valves XV-223A/B',
        consequence: 'Flame lift-off and overfiring',
        al: 3.8,
        pst: 15,
        rrt: 3,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: ['Field operator at the burner front'],
        bypassH: 4,
      }),
      alarm('AAL-224', 'AT-224', 'low', 1.2, 0.1, {
        rt: 5,
        sev: 'major',
        text: 'Reactor charge heater flue gas oxygen low',
        response: 'Open the air registers; reduce firing until oxygen recovers',
        consequence: 'Incomplete combustion, afterburning in the convection section',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'Recycle gas compressor K-203',
    description: 'Two-stage centrifugal compressor, steam-turbine driven',
    instruments: [
      ...K203.instruments,
      inst('PT-235', 'pressure', 'bar', [0, 120], mA(), {
        normal: [70, 80],
        design: [null, 100],
        device: 'safety_plc',
        text: 'Compressor discharge pressure',
      }),
      inst('PS-236', 'pressure', 'bar', [0.5, 6], contact, {
        normal: [2, 3],
        text: 'Lube oil header pressure switch, adjustable 0.5 to 6 bar',
      }),
      inst('FS-237', 'flow', 'm³/h', [2, 40], contact, {
        normal: [12, 20],
        text: 'Seal gas flow switch, thermal dispersion',
      }),
      inst('ST-239', 'other', 'rpm', [0, 15000], mA(), {
        normal: [9000, 10500],
        design: [null, 12000],
        device: 'other',
        text: 'Turbine speed, overspeed protection module',
      }),
    ],
    limits: [
      ...K203.limits,
      alarm('PAH-235', 'PT-235', 'high', 88, 1, {
        rt: 5,
        sev: 'major',
        text: 'Recycle gas compressor discharge pressure high',
        response: 'Open the spillback; check the reactor loop pressure',
      }),
      trip('PSHH-235', ['PT-235'], 'high', 94, 1, {
        sev: 'major',
        text: 'Recycle gas compressor discharge pressure high-high',
        action: 'Trip turbine trip-and-throttle valve',
        consequence: 'Discharge piping above design pressure',
        al: 100,
        pst: 60,
        rrt: 5,
        reset: 'operator',
        measures: ['Console operator watches discharge pressure'],
      }),
      trip('PSLL-236', ['PS-236'], 'low', 1.2, 0.2, {
        sev: 'major',
        text: 'Recycle gas compressor lube oil pressure low-low',
        action: 'Trip turbine trip-and-throttle valve',
        consequence: 'Bearing failure and compressor wreck',
        al: 0.8,
        pst: 20,
        rrt: 5,
        reset: 'operator',
        measures: [
          'Auxiliary lube oil pump on automatic start, checked before the bypass',
          'Field operator at the lube oil console',
        ],
        bypassH: 4,
      }),
      alarm('FAL-237', 'FS-237', 'low', 8, 1, {
        rt: 10,
        sev: 'major',
        text: 'Recycle gas compressor seal gas flow low',
        response: 'Check the seal gas filter and supply pressure',
      }),
      trip('SSHH-239', ['ST-239'], 'high', 11500, 100, {
        sev: 'severe',
        text: 'Recycle gas compressor turbine overspeed',
        action: 'Trip turbine trip-and-throttle valve',
        consequence: 'Turbine disc burst',
        al: 11800,
        pst: 2,
        rrt: 0.5,
        reset: 'shift_supervisor',
        bypassH: null,
        measures: ['Mechanical overspeed bolt in service'],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'Compressor suction drum V-240',
    description: 'Knock-out drum ahead of the recycle gas compressor',
    instruments: ['A', 'B'].map((x) =>
      inst(`LT-240${x}`, 'level', '%', [0, 100], mA(), {
        normal: [10, 35],
        device: 'safety_plc',
        text: `Suction drum level, guided-wave radar ${x}; ${SIS_FHR}`,
      }),
    ),
    limits: [
      alarm('LAH-240', 'LT-240A', 'high', 50, 2, {
        rt: 5,
        sev: 'major',
        text: 'Compressor suction drum level high',
        response: 'Open the drum drain to the closed drain system',
      }),
      trip('LSHH-240', ['LT-240A', 'LT-240B'], 'high', 65, 2, {
        sev: 'severe',
        text: 'Compressor suction drum level high-high, 1oo2',
        action: 'Trip recycle gas compressor K-203 and close suction valve XV-241',
        consequence: 'Liquid slug into the compressor, impeller damage and seal failure',
        al: 75,
        pst: 120,
        rrt: 15,
        reset: 'shift_supervisor',
        measures: [
          'Console operator watches the remaining level transmitter',
          'Field operator drains the drum by hand',
        ],
        sil: 2,
        subsystems: [sub('sensor', '1oo2', 1e-6, 0.1, 24, 12, 0.9, 15), safetyPlc(), valves1oo2(2e-6)],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'High-pressure separator V-204',
    description: 'Separates reactor effluent into recycle gas, hydrocarbon liquid and sour water',
    instruments: [
      ...['A', 'B', 'C'].map((x) =>
        inst(`LT-250${x}`, 'level', '%', [0, 100], mA(), {
          normal: [40, 60],
          device: 'safety_plc',
          text: `Hydrocarbon level, displacer-free radar ${x}; ${SIS_FHR}`,
        }),
      ),
      inst('LT-252', 'level', 'mm', [0, 600], mA(), { normal: [150, 350], text: 'Water boot interface level' }),
      inst('PT-253', 'pressure', 'bar', [0, 100], mA(), {
        normal: [55, 62],
        design: [null, 75],
        text: 'Separator pressure',
      }),
    ],
    limits: [
      alarm('LAL-250', 'LT-250A', 'low', 30, 2, {
        rt: 3,
        sev: 'severe',
        text: 'High-pressure separator level low',
        response: 'Close the level control valve by hand; check the liquid outlet',
        consequence: 'Gas blow-by towards the low-pressure separator',
      }),
      trip('LSLL-250', ['LT-250A', 'LT-250B', 'LT-250C'], 'low', 15, 2, {
        sev: 'severe',
        text: 'High-pressure separator level low-low, 2oo3 (gas blow-by protection)',
        action: 'Close liquid outlet valves XV-251A and XV-251B',
        consequence: 'High-pressure gas blows through into the low-pressure separator, which ruptures',
        al: 10,
        pst: 60,
        rrt: 15,
        reset: 'shift_supervisor',
        bypassH: null,
        test: 6,
        measures: ['No bypass in operation: the unit is shut down if the function is unavailable'],
        sil: 3,
        subsystems: [
          sub('sensor', '2oo3', 5e-7, 0.05, 24, 12, 0.95, 10),
          redundantPlc,
          sub('final_element', '1oo2', 1e-6, 0.05, 24, 6, 0.9, 10),
        ],
      }),
      alarm('LAH-252', 'LT-252', 'high', 450, 10, {
        rt: 15,
        sev: 'moderate',
        text: 'High-pressure separator water boot level high',
        response: 'Raise sour water draw-off',
      }),
      alarm('PAH-253', 'PT-253', 'high', 68, 1, {
        rt: 5,
        sev: 'major',
        text: 'High-pressure separator pressure high',
        response: 'Check the recycle gas compressor and the pressure control to flare',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Hydrotreater',
    name: 'Wash water pump P-205',
    description: 'Injects wash water ahead of the reactor effluent air cooler',
    instruments: [
      inst('FT-260', 'flow', 'm³/h', [0, 12], mA(true), {
        normal: [5, 7.5],
        text: 'Wash water flow, orifice and differential-pressure transmitter',
      }),
      inst('TT-261', 'temperature', '°C', [0, 150], pt100(2), {
        normal: [30, 70],
        design: [null, 120],
        text: 'Pump bearing, two-wire Pt100 (older installation)',
      }),
    ],
    limits: [
      alarm('FAL-260', 'FT-260', 'low', 3.5, 0.2, {
        rt: 10,
        sev: 'moderate',
        text: 'Wash water flow low',
        response: 'Check the pump and the injection quill',
        consequence: 'Salt deposits and corrosion in the effluent air cooler',
      }),
      // an on-delay on a trip: the window check warns that delays are meant for alarms
      trip('FSLL-260', ['FT-260'], 'low', 2, 0.2, {
        sev: 'moderate',
        text: 'Wash water pump minimum flow',
        action: 'Stop wash water pump P-205',
        delay: 5,
        consequence: 'Pump runs against a closed valve and overheats',
        al: 1.5,
        pst: 60,
        rrt: 10,
        reset: null,
        measures: ['Field operator checks the pump every hour'],
        bypassH: 12,
        test: 24,
      }),
      alarm('TAH-261', 'TT-261', 'high', 85, 2, {
        rt: 10,
        sev: 'minor',
        text: 'Wash water pump bearing temperature high',
        response: 'Check lubrication; change over to the spare pump',
      }),
    ],
  },
  ...tankSpecs(),
  {
    site: 'FHR',
    area: 'Tank Farm',
    name: 'Transfer pump P-340',
    description: 'Transfers products from the tank farm to the loading rack',
    instruments: [
      ...P340.instruments,
      inst('PT-341', 'pressure', 'bar', [0, 25], mA(), {
        normal: [8, 12],
        design: [null, 20],
        text: 'Pump discharge pressure',
      }),
    ],
    limits: [
      ...P340.limits,
      alarm('PAL-341', 'PT-341', 'low', 5, 0.3, {
        rt: 10,
        sev: 'moderate',
        text: 'Transfer pump discharge pressure low',
        response: 'Check the suction tank valve and pump priming',
      }),
      trip('PSHH-341', ['PT-341'], 'high', 16, 0.3, {
        sev: 'major',
        text: 'Transfer pump discharge pressure high-high (blocked outlet)',
        action: 'Stop transfer pump P-340',
        consequence: 'Thermal expansion in blocked-in piping and flange leak',
        al: 18,
        pst: 120,
        rrt: 5,
        reset: null,
        measures: ['Operator stays at the loading rack while the pump runs'],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Utilities',
    name: 'Steam boiler B-401',
    description: 'Water-tube package boiler, 40 t/h at 42 bar',
    instruments: [
      ...['A', 'B', 'C'].map((x) =>
        inst(`LT-401${x}`, 'level', 'mm', [-300, 300], mA(), {
          normal: [-50, 50],
          device: 'safety_plc',
          text: `Drum level from the normal water line, differential-pressure transmitter ${x}`,
        }),
      ),
      inst('PT-402', 'pressure', 'bar', [0, 60], mA(), {
        normal: [38, 42],
        design: [null, 46],
        device: 'safety_plc',
        text: 'Steam drum pressure',
      }),
      inst('TT-403', 'temperature', '°C', [0, 600], tc('K'), {
        normal: [160, 220],
        text: 'Flue gas after the economizer',
      }),
      inst('PT-404', 'pressure', 'kPa', [0, 400], mA(), {
        normal: [120, 200],
        device: 'safety_plc',
        text: 'Fuel gas to the burner, burner management system',
      }),
      inst('PS-406', 'pressure', 'kPa', [0.2, 5], contact, {
        normal: [1.5, 2.5],
        text: 'Combustion air pressure switch at the windbox',
      }),
    ],
    limits: [
      alarm('LAL-401', 'LT-401A', 'low', -120, 5, {
        rt: 3,
        sev: 'severe',
        text: 'Boiler drum level low',
        response: 'Check feedwater pumps and the level control valve; reduce firing',
        consequence: 'Tubes run dry and overheat',
      }),
      trip('LSLL-401', ['LT-401A', 'LT-401B', 'LT-401C'], 'low', -180, 5, {
        sev: 'severe',
        text: 'Boiler drum level low-low, 2oo3',
        action: 'Close burner fuel shut-off valves XV-407A/B; boiler trips',
        consequence: 'Dry firing, tube rupture and steam explosion',
        al: -220,
        pst: 60,
        rrt: 10,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: ['Boiler attendant watches the gauge glass continuously', 'Firing limited to 60 % of load'],
        bypassH: 2,
        sil: 2,
        subsystems: [sub('sensor', '2oo3', 1e-6, 0.05, 24, 12, 0.9, 20), safetyPlc(), valves1oo2(2e-6)],
      }),
      alarm('LAH-401', 'LT-401B', 'high', 120, 5, {
        rt: 10,
        sev: 'moderate',
        text: 'Boiler drum level high',
        response: 'Reduce feedwater; check the level controller',
      }),
      trip('LSHH-401', ['LT-401B'], 'high', 200, 5, {
        sev: 'major',
        text: 'Boiler drum level high-high',
        action: 'Close burner fuel shut-off valves XV-407A/B',
        consequence: 'Water carry-over into the steam header and the turbines',
        al: 240,
        pst: 120,
        rrt: 10,
        reset: 'shift_supervisor',
        measures: ['Boiler attendant watches the gauge glass'],
        bypassH: 4,
      }),
      alarm('PAH-402', 'PT-402', 'high', 43.5, 0.3, {
        rt: 5,
        sev: 'major',
        text: 'Steam drum pressure high',
        response: 'Reduce firing; open the start-up vent',
      }),
      trip('PSHH-402', ['PT-402'], 'high', 44.5, 0.5, {
        sev: 'severe',
        text: 'Steam drum pressure high-high',
        action: 'Close burner fuel shut-off valves XV-407A/B',
        consequence: 'Drum above its maximum allowable working pressure; safety valves lift',
        al: 46,
        pst: 60,
        rrt: 5,
        reset: 'shift_supervisor',
        codeSet: true,
        measures: ['Boiler attendant at the panel'],
        bypassH: 4,
      }),
      alarm('TAH-403', 'TT-403', 'high', 280, 5, {
        rt: 10,
        sev: 'moderate',
        text: 'Boiler flue gas temperature high',
        response: 'Blow soot; check the economizer for steaming',
      }),
      trip('PSLL-404', ['PT-404'], 'low', 80, 5, {
        sev: 'severe',
        text: 'Boiler fuel gas pressure low-low',
        action: 'Close burner fuel shut-off valves XV-407A/B',
        consequence: 'Flame-out and unburnt gas in the furnace',
        al: 60,
        pst: 5,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Boiler attendant watches the flame scanner'],
        bypassH: 2,
      }),
      trip('PSHH-404', ['PT-404'], 'high', 280, 5, {
        sev: 'major',
        text: 'Boiler fuel gas pressure high-high',
        action: 'Close burner fuel shut-off valves XV-407A/B',
        consequence: 'Flame lift-off and overfiring',
        al: 320,
        pst: 10,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Boiler attendant watches the flame scanner'],
        bypassH: 2,
      }),
      trip('PSL-406', ['PS-406'], 'low', 0.8, 0.1, {
        sev: 'severe',
        text: 'Boiler combustion air pressure low',
        action: 'Close burner fuel shut-off valves XV-407A/B',
        consequence: 'Fuel-rich firing and a furnace explosion',
        al: 0.6,
        pst: 5,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Boiler attendant watches the windbox pressure gauge'],
        bypassH: 2,
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Utilities',
    name: 'Waste gas incinerator H-450',
    description: 'Thermal oxidizer for sour-water stripper off-gas',
    instruments: [
      ...['A', 'B'].map((x) =>
        inst(`TT-451${x}`, 'temperature', '°C', [0, 1600], tc('S'), {
          normal: [1050, 1150],
          design: [null, 1350],
          device: 'limit_controller',
          text: `Combustion chamber, ceramic-sheathed thermocouple ${x}`,
        }),
      ),
      inst('TT-452', 'temperature', '°C', [0, 1600], tc('R'), {
        normal: [750, 850],
        text: 'Stack inlet, ceramic-sheathed thermocouple',
      }),
    ],
    limits: [
      alarm('TAL-451', 'TT-451A', 'low', 980, 5, {
        rt: 10,
        sev: 'major',
        text: 'Incinerator chamber temperature low',
        response: 'Raise support fuel; check the waste gas rate',
        consequence: 'Incomplete destruction of hydrogen sulfide',
        status: 'proposed',
      }),
      trip('TSLL-451', ['TT-451A', 'TT-451B'], 'low', 900, 10, {
        sev: 'major',
        text: 'Incinerator chamber temperature low-low, 1oo2',
        action: 'Close waste gas valve XV-455 and divert the off-gas to the flare',
        consequence: 'Hydrogen sulfide released from the stack',
        al: 850,
        pst: 120,
        rrt: 10,
        reset: 'operator',
        measures: ['Console operator watches the stack analyser'],
      }),
      alarm('TAH-451', 'TT-451B', 'high', 1220, 5, {
        rt: 10,
        sev: 'major',
        text: 'Incinerator chamber temperature high',
        response: 'Reduce support fuel; check the waste gas composition',
      }),
      trip('TSHH-451', ['TT-451B'], 'high', 1280, 10, {
        sev: 'major',
        text: 'Incinerator chamber over-temperature limiter',
        action: 'Limiter closes support fuel and waste gas valves',
        consequence: 'Refractory failure and shell overheating',
        al: 1320,
        pst: 300,
        rrt: 15,
        reset: 'shift_supervisor',
        codeSet: true,
        grace: 0,
        measures: ['Console operator watches the shell temperature survey'],
      }),
      alarm('TAH-452', 'TT-452', 'high', 950, 10, {
        rt: 15,
        sev: 'moderate',
        text: 'Incinerator stack temperature high',
        response: 'Reduce support fuel',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Utilities',
    name: 'Instrument air compressor K-410',
    description: 'Oil-free screw compressor, instrument air for the whole refinery',
    instruments: [
      // a head transmitter set to drive downscale on a sensor break, below a high trip: the window check warns
      inst('TT-410', 'temperature', '°C', [0, 250], pt100(3, true), {
        normal: [140, 175],
        design: [null, 220],
        burnout: 'downscale',
        text: 'Air end discharge, head transmitter set to downscale burnout',
      }),
      inst('PT-411', 'pressure', 'bar', [0, 10], mA(), { normal: [6.5, 7.5], text: 'Instrument air header pressure' }),
    ],
    limits: [
      alarm('TAH-410', 'TT-410', 'high', 195, 3, {
        rt: 10,
        sev: 'moderate',
        text: 'Instrument air compressor discharge temperature high',
        response: 'Check the cooler and the cooling water flow',
      }),
      trip('TSHH-410', ['TT-410'], 'high', 210, 5, {
        sev: 'major',
        text: 'Instrument air compressor discharge temperature high-high',
        action: 'Stop compressor K-410; standby compressor starts',
        consequence: 'Air end damage and loss of instrument air',
        al: 220,
        pst: 300,
        rrt: 10,
        reset: 'operator',
        badValue: false,
        measures: ['Standby compressor K-411 on automatic start'],
      }),
      alarm('PAL-411', 'PT-411', 'low', 5.5, 0.2, {
        rt: 10,
        sev: 'major',
        text: 'Instrument air header pressure low',
        response: 'Start the standby compressor; look for leaks and open drains',
      }),
      alarm('PALL-411', 'PT-411', 'low', 4.5, 0.2, {
        rt: 3,
        sev: 'major',
        text: 'Instrument air header pressure low-low',
        response: 'Open the nitrogen back-up to the air header; prepare the units for an orderly shutdown',
        consequence: 'Control valves go to their fail positions',
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Utilities',
    name: 'Cooling water pump P-420A',
    description: 'Main cooling water circulation pump',
    instruments: [
      inst('PT-421', 'pressure', 'bar', [0, 10], mA(), {
        normal: [3.8, 4.5],
        text: 'Cooling water supply header pressure',
      }),
    ],
    limits: [
      alarm('PAL-421', 'PT-421', 'low', 3, 0.1, {
        rt: 5,
        sev: 'major',
        text: 'Cooling water supply pressure low',
        response: 'Start the standby pump; check the strainers',
      }),
      trip('PSLL-421', ['PT-421'], 'low', 2.4, 0.1, {
        sev: 'major',
        text: 'Cooling water supply pressure low-low',
        action: 'Start standby cooling water pump P-420B',
        consequence: 'Loss of cooling to condensers and compressors',
        al: 2,
        pst: 120,
        rrt: 15,
        reset: null,
        measures: ['Field operator stands by to start P-420B by hand'],
      }),
    ],
  },
  {
    site: 'FHR',
    area: 'Utilities',
    name: 'Flare knock-out drum V-430',
    description: 'Removes liquid from the flare header',
    instruments: [
      inst('LT-430', 'level', '%', [0, 100], mA(), {
        normal: [5, 25],
        device: 'safety_plc',
        text: `Knock-out drum level; ${SIS_FHR}`,
      }),
    ],
    limits: [
      alarm('LAH-430', 'LT-430', 'high', 45, 2, {
        rt: 10,
        sev: 'major',
        text: 'Flare knock-out drum level high',
        response: 'Start a drain pump; find the source of liquid in the flare header',
      }),
      trip('LSHH-430', ['LT-430'], 'high', 60, 2, {
        sev: 'severe',
        text: 'Flare knock-out drum level high-high',
        action: 'Start drain pumps P-431A/B and close sour water inflow valve XV-432',
        consequence: 'Burning liquid carried out of the flare tip',
        al: 70,
        pst: 600,
        rrt: 30,
        reset: 'operator',
        measures: ['Console operator watches the drum level', 'Field operator ready to start the drain pumps by hand'],
        sil: 1,
        subsystems: [sub('sensor', '1oo1', 1e-6, 0.05, 24, 12, 0.9, 15), safetyPlc(), valve1oo1(2.5e-6)],
      }),
    ],
  },
]

function tankSpecs(): ProcessSpec[] {
  const tank = (
    name: string,
    description: string,
    lt: string,
    ls: string,
    height: number,
    normal: Band,
    overfill: number,
    extra: Partial<ProcessSpec> = {},
  ): ProcessSpec => ({
    site: 'FHR',
    area: 'Tank Farm',
    name,
    description,
    instruments: [
      inst(lt, 'level', 'mm', [0, height], mA(), {
        normal,
        design: [null, overfill],
        text: 'Radar level gauge on the tank roof',
      }),
      inst(ls, 'level', 'mm', [0, height], contact, {
        normal: [null, normal[1]],
        design: [null, overfill],
        text: 'Vibrating-fork high-high level switch, independent of the radar',
      }),
      ...(extra.instruments ?? []),
    ],
    limits: extra.limits ?? [],
  })
  const tankLimits = (
    id: string,
    lt: string,
    ls: string,
    high: number,
    low: number,
    hh: number,
    al: number,
    valve: string,
    o: Partial<TripOpts> = {},
    on = [ls],
  ) => [
    alarm(`LAH-${id}`, lt, 'high', high, 50, {
      rt: 20,
      sev: 'major',
      text: `Tank level high`,
      response: 'Stop or divert the receipt; confirm the line-up',
      causes: 'Receipt left running; wrong tank lined up; shore or pipeline rate higher than planned',
      confirm: 'Compare with the independent level switch and the tank gauging; check the receipt line-up',
      consequence: 'Overfill into the bund and a vapour release',
      impact: 'environment',
    }),
    alarm(`LAL-${id}`, lt, 'low', low, 50, {
      rt: 20,
      sev: 'moderate',
      text: `Tank level low`,
      response: 'Stop the transfer pump before it loses suction',
    }),
    trip(`LSHH-${ls.slice(3)}`, on, 'high', hh, 0, {
      sev: 'severe',
      text: 'Tank overfill protection, high-high level',
      action: `Close tank inlet valve ${valve} and stop the transfer pump`,
      consequence: 'Tank overfill, vapour cloud and fire',
      al,
      pst: 900,
      rrt: 60,
      reset: 'operator',
      measures: ['Operator gauges the tank by hand every 30 min during the receipt', 'Receipt rate limited to half'],
      ...o,
    }),
  ]
  return [
    tank(
      'Crude tank TK-301',
      'Floating-roof crude storage, 50 000 m³',
      'LT-311',
      'LS-312',
      20000,
      [1500, 16500],
      18500,
      {
        limits: [
          ...tankLimits('311', 'LT-311', 'LS-312', 17000, 1200, 18000, 18500, 'XV-313'),
          alarm('LA-311', 'LT-311', 'high', 16600, 50, {
            cls: 'alert',
            rt: 120,
            sev: 'minor',
            text: 'Tank level near working capacity',
            response: 'Plan the next transfer out before the next receipt',
            causes: 'Receipts ahead of the transfer plan',
            impact: 'asset_production',
          }),
        ].map((l) => ({
          ...l,
          description: `Crude tank TK-301: ${l.description?.toLowerCase()}`,
        })),
      },
    ),
    tank(
      'Gasoline tank TK-302',
      'Internal floating-roof gasoline storage, 30 000 m³',
      'LT-321',
      'LS-322',
      18000,
      [1500, 15000],
      16800,
      {
        instruments: [
          inst('LT-323', 'level', 'mm', [0, 18000], mA(), {
            normal: [null, 15000],
            design: [null, 16800],
            device: 'safety_plc',
            text: `Second, independent radar for overfill protection; ${SIS_FHR}`,
          }),
        ],
        limits: [
          ...tankLimits(
            '321',
            'LT-321',
            'LS-322',
            15500,
            1200,
            16300,
            16800,
            'XV-324',
            {
              sil: 1,
              subsystems: [sub('sensor', '1oo2', 2e-6, 0.1, 24, 12, 0.8, 15), safetyPlc(), valve1oo1(3e-6)],
            },
            ['LS-322', 'LT-323'],
          ),
          alarm('LAHH-321', 'LT-321', 'high', 16000, 50, {
            rt: 5,
            sev: 'severe',
            text: 'Tank level high-high',
            response: 'Stop the receipt at once; open the swing line to the spare tank',
            causes: 'Receipt not stopped at the high alarm; level gauge drifting low',
            confirm: 'Second radar LT-323 and the level switch LS-322 agree',
            consequence: 'Overfill, vapour cloud and fire',
            impact: 'safety',
            safetyRrf: 10,
          }),
        ].map((l) => ({ ...l, description: `Gasoline tank TK-302: ${l.description?.toLowerCase()}` })),
      },
    ),
    tank(
      'Diesel tank TK-303',
      'Fixed-roof diesel storage with nitrogen blanket, 20 000 m³',
      'LT-331',
      'LS-332',
      16000,
      [1200, 13500],
      15000,
      {
        instruments: [
          inst('PT-334', 'pressure', 'kPa', [-1, 5], mA(), {
            normal: [0.3, 1.5],
            design: [-0.5, 3.5],
            text: 'Vapour space pressure, nitrogen blanket',
          }),
        ],
        limits: [
          ...tankLimits('331', 'LT-331', 'LS-332', 14000, 1000, 14500, 15000, 'XV-333'),
          alarm('PAH-334', 'PT-334', 'high', 2.5, 0.1, {
            rt: 10,
            sev: 'major',
            text: 'Tank vapour space pressure high',
            response: 'Check the blanket gas regulator and the breather valve',
            status: 'proposed',
          }),
          alarm('PAL-334', 'PT-334', 'low', 0, 0.1, {
            rt: 10,
            sev: 'major',
            text: 'Tank vapour space pressure low',
            response: 'Check the nitrogen supply; stop pumping out of the tank',
            status: 'proposed',
          }),
        ].map((l) => ({ ...l, description: `Diesel tank TK-303: ${l.description?.toLowerCase()}` })),
      },
    ),
  ]
}

// ---- Saltmarsh Polymers ----

const R501 = machineTemps(
  [{ tag: 'TT-504', where: 'agitator motor winding' }],
  'reactor R-501 agitator',
  [0, 200],
  [70, 110],
  155,
  135,
  150,
  {
    text: 'Pt100 in the stator winding',
    al: 155,
    stop: 'Stop the agitator motor; operators follow the loss-of-agitation procedure',
  },
)
const X601 = machineTemps(
  [{ tag: 'TT-613', where: 'main motor winding' }],
  'extruder X-601 main drive',
  [0, 200],
  [80, 120],
  155,
  140,
  150,
  { text: 'Pt100 in the stator winding', al: 155, stop: 'Stop the extruder main drive' },
)
const P720 = machineTemps(
  [
    { tag: 'TT-720A', where: 'drive-end bearing' },
    { tag: 'TT-720B', where: 'non-drive-end bearing' },
  ],
  'thermal oil pump P-720A',
  [0, 150],
  [40, 75],
  120,
  90,
  100,
  { al: 115 },
)

const SMP: ProcessSpec[] = [
  {
    site: 'SMP',
    area: 'Reactor Train A',
    name: 'Polymerization reactor R-501',
    description: 'Jacketed stirred-tank reactor, 25 m³, batch polymerization',
    instruments: [
      ...['A', 'B', 'C'].map((x) =>
        inst(`TT-501${x}`, 'temperature', '°C', [0, 200], pt100(4, true), {
          normal: [75, 85],
          design: [null, 150],
          device: 'safety_plc',
          text: `Reactor contents, four-wire Pt100 with head transmitter ${x}; ${SIS_SMP}`,
        }),
      ),
      ...['A', 'B'].map((x) =>
        inst(`PT-502${x}`, 'pressure', 'bar', [0, 25], mA(), {
          normal: [8, 10],
          design: [null, 16],
          device: 'safety_plc',
          text: `Reactor vapour space pressure ${x}; ${SIS_SMP}`,
        }),
      ),
      inst('FT-503', 'flow', 'm³/h', [0, 150], mA(true), {
        normal: [90, 120],
        device: 'safety_plc',
        text: 'Jacket cooling water flow, orifice and differential-pressure transmitter',
      }),
      ...R501.instruments,
      inst('LT-505', 'level', '%', [0, 100], mA(), {
        normal: [45, 70],
        device: 'safety_plc',
        text: 'Reactor level, radar',
      }),
    ],
    limits: [
      alarm('TAH-501A', 'TT-501A', 'high', 92, 1, {
        rt: 3,
        sev: 'severe',
        text: 'Reactor temperature high',
        response: 'Stop the initiator feed; put full cooling water on the jacket',
        consequence: 'Runaway polymerization',
      }),
      trip('TSHH-501', ['TT-501A', 'TT-501B', 'TT-501C'], 'high', 98, 2, {
        sev: 'severe',
        text: 'Reactor temperature high-high, 2oo3 (runaway protection)',
        action: 'Inject short-stop solution from V-506 and stop monomer and initiator feeds',
        consequence: 'Runaway reaction, reactor overpressure and rupture',
        al: 105,
        pst: 300,
        rrt: 30,
        reset: 'shift_supervisor',
        measures: [
          'Second operator assigned to watch reactor temperature and pressure',
          'Manual short-stop injection tested before the bypass',
        ],
        sil: 2,
        subsystems: [sub('sensor', '2oo3', 8e-7, 0.05, 24, 12, 0.9, 15), safetyPlc(), valves1oo2(2e-6)],
      }),
      alarm('PAH-502', 'PT-502A', 'high', 12, 0.2, {
        rt: 5,
        sev: 'severe',
        text: 'Reactor pressure high',
        response: 'Stop monomer feed; check the vent condenser',
      }),
      trip('PSHH-502', ['PT-502A', 'PT-502B'], 'high', 13.5, 0.3, {
        sev: 'severe',
        text: 'Reactor pressure high-high, 1oo2',
        action: 'Stop monomer feed and inject short-stop solution',
        consequence: 'Reactor above design pressure, rupture disc bursts to the catch tank',
        al: 14.5,
        pst: 240,
        rrt: 30,
        reset: 'shift_supervisor',
        measures: [
          'Console operator watches the remaining pressure transmitter',
          'Monomer feed on manual at reduced rate',
        ],
        sil: 2,
        subsystems: [sub('sensor', '1oo2', 1.2e-6, 0.1, 24, 12, 0.9, 15), safetyPlc(), valves1oo2(2e-6)],
      }),
      alarm('FAL-503', 'FT-503', 'low', 70, 3, {
        rt: 3,
        sev: 'major',
        text: 'Reactor jacket cooling water flow low',
        response: 'Start the standby cooling water pump; stop the initiator feed',
      }),
      trip('FSLL-503', ['FT-503'], 'low', 50, 3, {
        sev: 'severe',
        text: 'Reactor jacket cooling water flow low-low',
        action: 'Stop monomer and initiator feeds',
        consequence: 'Loss of cooling leads to a runaway reaction',
        al: 40,
        pst: 300,
        rrt: 20,
        reset: 'shift_supervisor',
        measures: ['Field operator checks the jacket return temperature every 15 min'],
        sil: 1,
        subsystems: [sub('sensor', '1oo1', 1.5e-6, 0.05, 24, 12, 0.9, 15), safetyPlc(), valve1oo1()],
      }),
      ...R501.limits,
      alarm('LAH-505', 'LT-505', 'high', 80, 2, {
        rt: 10,
        sev: 'major',
        text: 'Reactor level high',
        response: 'Stop the monomer charge; check the batch recipe',
      }),
      trip('LSHH-505', ['LT-505'], 'high', 88, 2, {
        sev: 'major',
        text: 'Reactor level high-high',
        action: 'Close monomer feed valve XV-507',
        consequence: 'Liquid into the vent system and the condenser',
        al: 93,
        pst: 300,
        rrt: 10,
        reset: 'operator',
        measures: ['Batch charge weighed on the feed drum load cells'],
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Reactor Train A',
    name: 'Monomer feed drum V-510',
    description: 'Pressurized monomer day drum',
    instruments: [
      inst('LT-510', 'level', '%', [0, 100], mA(), {
        normal: [30, 70],
        device: 'safety_plc',
        text: 'Drum level, differential pressure',
      }),
      inst('PT-512', 'pressure', 'bar', [0, 16], mA(), { normal: [5, 7], design: [null, 12], text: 'Drum pressure' }),
      inst('FS-513', 'flow', 'm³/h', [1, 20], contact, {
        normal: [6, 12],
        text: 'Feed pump P-511 minimum flow switch',
      }),
    ],
    limits: [
      alarm('LAH-510', 'LT-510', 'high', 80, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Monomer feed drum level high',
        response: 'Stop the unloading from the rail car',
      }),
      alarm('LAL-510', 'LT-510', 'low', 20, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Monomer feed drum level low',
        response: 'Start an unloading; slow the reactor charge',
      }),
      trip('LSLL-510', ['LT-510'], 'low', 10, 2, {
        sev: 'major',
        text: 'Monomer feed drum level low-low',
        action: 'Stop feed pump P-511',
        consequence: 'Pump runs dry, seal failure and monomer release',
        al: 6,
        pst: 120,
        rrt: 10,
        reset: null,
        measures: ['Field operator watches the pump during charging'],
      }),
      alarm('PAH-512', 'PT-512', 'high', 9, 0.2, {
        rt: 10,
        sev: 'major',
        text: 'Monomer feed drum pressure high',
        response: 'Check the drum temperature and the vent',
      }),
      trip('FSL-513', ['FS-513'], 'low', 3, 0.5, {
        sev: 'moderate',
        text: 'Monomer feed pump minimum flow',
        action: 'Stop feed pump P-511',
        consequence: 'Pump overheats against a closed valve',
        al: 2,
        pst: 60,
        rrt: 5,
        reset: null,
        measures: ['Field operator at the pump'],
        bypassH: 12,
        test: 24,
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Reactor Train A',
    name: 'Initiator feed pump P-515',
    description: 'Diaphragm metering pump for the initiator solution',
    instruments: [
      inst('FS-515', 'flow', 'L/min', [0.5, 10], contact, {
        normal: [2, 4],
        text: 'Thermal-dispersion flow switch on the pump discharge',
      }),
      // the transmitter range ends just above the trip: the window check warns about the range end
      inst('PT-516', 'pressure', 'bar', [0, 32], mA(), {
        normal: [14, 20],
        design: [null, 32],
        device: 'safety_plc',
        text: 'Pump discharge pressure',
      }),
    ],
    limits: [
      alarm('FSL-515', 'FS-515', 'low', 1.2, 0.2, {
        rt: 5,
        sev: 'major',
        text: 'Initiator flow low',
        response: 'Check the metering pump stroke and the suction filter',
        consequence: 'Unreacted monomer accumulates in the reactor',
      }),
      trip('PSHH-516', ['PT-516'], 'high', 31, 0.5, {
        sev: 'major',
        text: 'Initiator pump discharge pressure high-high',
        action: 'Stop initiator feed pump P-515',
        consequence: 'Diaphragm rupture and initiator release',
        al: 32,
        pst: 30,
        rrt: 3,
        reset: 'operator',
        measures: ['Pump relief valve in service'],
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Reactor Train A',
    name: 'Monomer recovery compressor K-520',
    description: 'Liquid-ring vacuum compressor recovering monomer from the degassing vessel',
    instruments: [
      inst('PT-521', 'pressure', 'kPa', [0, 120], mA(), {
        ref: 'absolute',
        normal: [25, 40],
        text: 'Suction pressure, absolute',
      }),
      inst('LS-523', 'level', '%', [0, 100], contact, { normal: [20, 50], text: 'Separator high-high level switch' }),
    ],
    limits: [
      alarm('PAH-521', 'PT-521', 'high', 60, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Monomer recovery suction pressure high',
        response: 'Check the seal liquid flow and temperature',
        status: 'proposed',
      }),
      trip('PSHH-521', ['PT-521'], 'high', 85, 3, {
        sev: 'major',
        text: 'Monomer recovery suction pressure high-high (air ingress)',
        action: 'Stop compressor K-520 and close suction valve XV-524',
        consequence: 'Air drawn into a monomer system: flammable mixture',
        al: 100,
        pst: 300,
        rrt: 15,
        reset: 'shift_supervisor',
        measures: ['Oxygen analyser reading checked every 30 min'],
        status: 'proposed',
      }),
      trip('LSHH-523', ['LS-523'], 'high', 75, 0, {
        sev: 'moderate',
        text: 'Monomer recovery separator level high-high',
        action: 'Stop compressor K-520',
        consequence: 'Seal liquid carried over into the discharge',
        al: 85,
        pst: 300,
        rrt: 10,
        reset: 'operator',
        measures: ['Field operator drains the separator by hand'],
        status: 'proposed',
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Extrusion',
    name: 'Extruder X-601',
    description: 'Co-rotating twin-screw extruder, six barrel zones',
    instruments: [
      ...[1, 2, 3, 4].map((z) =>
        inst(`TT-60${z}`, 'temperature', '°C', [0, 400], tc('J'), {
          normal: [200, 240],
          design: [null, 320],
          text: `Barrel zone ${z}, type J thermocouple to the zone controller`,
        }),
      ),
      inst('TT-607', 'temperature', '°C', [0, 400], tc('J'), {
        normal: [200, 240],
        design: [null, 320],
        text: 'Former barrel zone 7 (removed in the barrel rebuild)',
      }),
      ...['A', 'B'].map((x) =>
        inst(`PT-610${x}`, 'pressure', 'bar', [0, 500], mA(), {
          normal: [180, 240],
          design: [null, 450],
          device: 'safety_plc',
          text: `Melt pressure ahead of the die, transmitter ${x}; ${SIS_SMP}`,
        }),
      ),
      inst('TT-611', 'temperature', '°C', [0, 400], tc('K', true), {
        normal: [230, 250],
        text: 'Melt temperature at the die, immersion thermocouple',
      }),
      ...X601.instruments,
    ],
    limits: [
      ...[1, 2, 3, 4].map((z) =>
        alarm(`TAH-60${z}`, `TT-60${z}`, 'high', 260, 3, {
          rt: 10,
          sev: 'moderate',
          text: `Extruder barrel zone ${z} temperature high`,
          response: 'Check the zone heater contactor and cooling fan',
          consequence: 'Polymer degradation, off-spec product',
        }),
      ),
      alarm('TAH-607', 'TT-607', 'high', 260, 3, {
        rt: 10,
        sev: 'moderate',
        text: 'Extruder barrel zone 7 temperature high',
        response: 'Check the zone heater contactor',
        status: 'retired',
        retiredReason: 'barrel zone 7 removed in the barrel rebuild',
      }),
      alarm('PAH-610', 'PT-610A', 'high', 300, 5, {
        rt: 5,
        sev: 'major',
        text: 'Extruder melt pressure high',
        response: 'Reduce screw speed; check the screen changer',
      }),
      trip('PSHH-610', ['PT-610A', 'PT-610B'], 'high', 350, 10, {
        sev: 'severe',
        text: 'Extruder melt pressure high-high, 1oo2',
        action: 'Stop the extruder main drive',
        consequence: 'Die or barrel rupture, hot melt release',
        al: 380,
        pst: 10,
        rrt: 2,
        reset: 'shift_supervisor',
        measures: ['Rupture disc on the die adapter in service', 'Screw speed limited to 50 %'],
        sil: 1,
        subsystems: [
          sub('sensor', '1oo2', 2e-6, 0.1, 24, 12, 0.85, 10),
          safetyPlc(),
          sub('final_element', '1oo1', 5e-7, 0.1, 8, 12, 0.95, 10),
        ],
      }),
      alarm('TAH-611', 'TT-611', 'high', 270, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Extruder melt temperature high',
        response: 'Reduce screw speed and barrel set points',
        status: 'proposed',
      }),
      ...X601.limits,
    ],
  },
  {
    site: 'SMP',
    area: 'Extrusion',
    name: 'Underwater pelletizer PZ-620',
    description: 'Die-face pelletizer with process water loop',
    instruments: [
      inst('FT-620', 'flow', 'm³/h', [0, 80], mA(true), {
        normal: [45, 60],
        text: 'Process water flow, orifice and differential-pressure transmitter',
      }),
      inst('FS-621', 'flow', 'm³/h', [5, 70], contact, {
        normal: [45, 60],
        text: 'Process water flow switch, paddle type',
      }),
    ],
    limits: [
      alarm('FAL-620', 'FT-620', 'low', 35, 2, {
        rt: 5,
        sev: 'moderate',
        text: 'Pelletizer process water flow low',
        response: 'Check the water pump and the water box filter',
      }),
      trip('FSL-621', ['FS-621'], 'low', 25, 3, {
        sev: 'major',
        text: 'Pelletizer process water flow low',
        action: 'Stop the pelletizer and divert the melt to the start-up valve',
        consequence: 'Melt freezes in the die plate; hot melt and steam at the die face',
        al: 20,
        pst: 20,
        rrt: 3,
        reset: 'operator',
        measures: ['Operator stays at the pelletizer'],
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Extrusion',
    name: 'Pellet dryer D-630',
    description: 'Centrifugal pellet dryer with heated air',
    instruments: [
      inst('TT-630', 'temperature', '°C', [0, 200], tc('K', true), {
        normal: [70, 90],
        design: [null, 140],
        text: 'Drying air after the heater',
      }),
    ],
    limits: [
      alarm('TAH-630', 'TT-630', 'high', 105, 2, {
        rt: 10,
        sev: 'moderate',
        text: 'Pellet dryer air temperature high',
        response: 'Reduce the heater output',
        status: 'proposed',
      }),
      trip('TSHH-630', ['TT-630'], 'high', 120, 3, {
        sev: 'major',
        text: 'Pellet dryer air temperature high-high',
        action: 'Switch off the air heater',
        consequence: 'Pellets melt and ignite in the dryer',
        al: 130,
        pst: 300,
        rrt: 10,
        reset: 'operator',
        measures: ['Operator checks the dryer every 30 min'],
        status: 'proposed',
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Thermal Oil System',
    name: 'Thermal oil heater H-701',
    description: 'Gas-fired coil heater, 4 MW, mineral thermal oil',
    instruments: [
      ...['A', 'B'].map((x) =>
        inst(`TT-701${x}`, 'temperature', '°C', [0, 500], tc('K'), {
          normal: [280, 300],
          design: [null, 330],
          device: 'limit_controller',
          text: `Oil outlet, thermocouple ${x} to the latching temperature limiter`,
        }),
      ),
      inst('TT-702', 'temperature', '°C', [0, 800], tc('N'), {
        normal: [340, 380],
        design: [null, 450],
        text: 'Coil skin, radiant section',
      }),
      inst('TT-703', 'temperature', '°C', [0, 800], tc('K'), { normal: [330, 380], text: 'Flue gas at the stack' }),
      ...['A', 'B'].map((x) =>
        inst(`FT-704${x}`, 'flow', 'm³/h', [0, 200], mA(true), {
          normal: [130, 160],
          device: 'safety_plc',
          text: `Oil flow through the coil, differential-pressure transmitter ${x}; ${SIS_SMP}`,
        }),
      ),
      inst('PT-705', 'pressure', 'kPa', [0, 200], mA(), {
        normal: [60, 90],
        device: 'safety_plc',
        text: 'Fuel gas to the burner',
      }),
      inst('PS-706', 'pressure', 'kPa', [0.1, 2.5], contact, {
        normal: [0.9, 1.4],
        text: 'Combustion air pressure switch',
      }),
    ],
    limits: [
      alarm('TAH-701', 'TT-701A', 'high', 310, 2, {
        rt: 5,
        sev: 'major',
        text: 'Thermal oil heater outlet temperature high',
        response: 'Reduce firing; check the oil flow',
        consequence: 'Oil cracking and coke in the coil',
      }),
      trip('TSHH-701', ['TT-701A', 'TT-701B'], 'high', 318, 5, {
        sev: 'severe',
        text: 'Thermal oil heater outlet over-temperature limiter, 1oo2',
        action: 'Limiter closes the burner fuel shut-off valves',
        consequence: 'Oil above its film temperature, coil coking, oil fire',
        al: 325,
        pst: 120,
        rrt: 10,
        reset: 'shift_supervisor',
        codeSet: true,
        grace: 0,
        measures: ['Operator watches the outlet temperature', 'Firing limited to 70 %'],
        sil: 1,
        subsystems: [
          sub('sensor', '1oo2', 1e-6, 0.1, 24, 12, 0.9, 15),
          sub('logic', '1oo1', 3e-7, 0.02, 8, 12, 0.9, 15),
          valves1oo2(2e-6),
        ],
      }),
      alarm('TAH-702', 'TT-702', 'high', 400, 5, {
        rt: 10,
        sev: 'major',
        text: 'Thermal oil heater coil skin temperature high',
        response: 'Reduce firing; check the oil flow',
      }),
      alarm('TAH-703', 'TT-703', 'high', 420, 5, {
        rt: 10,
        sev: 'moderate',
        text: 'Thermal oil heater stack temperature high',
        response: 'Check for a coil leak or fire in the convection section',
      }),
      trip('TSHH-703', ['TT-703'], 'high', 450, 10, {
        sev: 'severe',
        text: 'Thermal oil heater stack temperature high-high (coil leak)',
        action: 'Close burner fuel valves and stop the oil circulation pumps',
        consequence: 'Oil fire inside the heater',
        al: 480,
        pst: 120,
        rrt: 10,
        reset: 'shift_supervisor',
        measures: ['Operator watches the stack temperature and the expansion tank level'],
      }),
      alarm('FAL-704', 'FT-704A', 'low', 110, 3, {
        rt: 3,
        sev: 'major',
        text: 'Thermal oil flow through the heater low',
        response: 'Start the standby circulation pump; check the strainer',
      }),
      trip('FSLL-704', ['FT-704A', 'FT-704B'], 'low', 90, 3, {
        sev: 'severe',
        text: 'Thermal oil flow through the heater low-low, 1oo2',
        action: 'Close burner fuel shut-off valves',
        consequence: 'Oil overheats in the coil, coking and tube rupture, oil fire',
        al: 75,
        pst: 60,
        rrt: 10,
        reset: 'shift_supervisor',
        measures: ['Operator watches the remaining flow transmitter', 'Firing limited to 70 %'],
        sil: 2,
        subsystems: [sub('sensor', '1oo2', 1.5e-6, 0.1, 24, 12, 0.9, 15), safetyPlc(), valves1oo2(2e-6)],
      }),
      trip('PSLL-705', ['PT-705'], 'low', 35, 3, {
        sev: 'severe',
        text: 'Thermal oil heater fuel gas pressure low-low',
        action: 'Close burner fuel shut-off valves',
        consequence: 'Flame-out and unburnt gas in the firebox',
        al: 25,
        pst: 5,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Operator watches the flame scanner'],
        bypassH: 2,
      }),
      trip('PSHH-705', ['PT-705'], 'high', 130, 3, {
        sev: 'major',
        text: 'Thermal oil heater fuel gas pressure high-high',
        action: 'Close burner fuel shut-off valves',
        consequence: 'Overfiring and flame lift-off',
        al: 150,
        pst: 10,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Operator watches the flame scanner'],
        bypassH: 2,
      }),
      trip('PSL-706', ['PS-706'], 'low', 0.5, 0.1, {
        sev: 'severe',
        text: 'Thermal oil heater combustion air pressure low',
        action: 'Close burner fuel shut-off valves',
        consequence: 'Fuel-rich firing and a furnace explosion',
        al: 0.35,
        pst: 5,
        rrt: 2,
        reset: 'operator',
        codeSet: true,
        measures: ['Operator watches the windbox pressure gauge'],
        bypassH: 2,
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Thermal Oil System',
    name: 'Expansion tank V-710',
    description: 'Thermal oil expansion tank, nitrogen blanketed',
    instruments: [
      inst('LT-710', 'level', '%', [0, 100], volts(1, 5), {
        normal: [35, 65],
        device: 'safety_plc',
        text: 'Tank level, transmitter with 1–5 V output',
      }),
    ],
    limits: [
      alarm('LAH-710', 'LT-710', 'high', 80, 2, {
        rt: 10,
        sev: 'major',
        text: 'Expansion tank level high',
        response: 'Check for water ingress and boiling; reduce the heater load',
      }),
      alarm('LAL-710', 'LT-710', 'low', 25, 2, {
        rt: 10,
        sev: 'major',
        text: 'Expansion tank level low',
        response: 'Look for oil leaks; top up from the storage drum',
      }),
      trip('LSLL-710', ['LT-710'], 'low', 12, 2, {
        sev: 'severe',
        text: 'Expansion tank level low-low',
        action: 'Close burner fuel valves and stop the oil circulation pumps',
        consequence: 'Pump cavitation, loss of flow through the heater coil, oil fire',
        al: 8,
        pst: 300,
        rrt: 15,
        reset: 'shift_supervisor',
        measures: ['Operator watches the tank level gauge'],
      }),
    ],
  },
  {
    site: 'SMP',
    area: 'Thermal Oil System',
    name: 'Thermal oil circulation pump P-720A',
    description: 'Main thermal oil circulation pump',
    instruments: [
      ...P720.instruments,
      inst('PDT-721', 'pressure', 'kPa', [0, 600], volts(0, 10), {
        ref: 'differential',
        normal: [350, 420],
        text: 'Pump differential pressure, 0–10 V output',
      }),
    ],
    limits: [
      ...P720.limits,
      alarm('PDAL-721', 'PDT-721', 'low', 250, 10, {
        rt: 5,
        sev: 'major',
        text: 'Thermal oil pump differential pressure low',
        response: 'Start the standby pump; check for cavitation',
      }),
    ],
  },
]

/** Every process of the demo register, in the order they are written. */
export const DEMO_REGISTER: readonly ProcessSpec[] = [...FHR, ...SMP]

async function actor(trx: Trx, siteCode: string, role: Role): Promise<AuditContext> {
  const row = await trx
    .selectFrom('role_assignment')
    .innerJoin('site', 'site.id', 'role_assignment.site_id')
    .select('role_assignment.user_id')
    .where('site.code', '=', siteCode)
    .where('role_assignment.role', '=', role)
    .orderBy('role_assignment.user_id')
    .executeTakeFirst()
  return { actorId: row?.user_id ?? null, requestId: null, ip: null }
}

/**
 * Moves a process's freshly drafted limits to a new status in one go: the row, a revision with the reason and one audit
 * event each (what an implemented change request writes, without the request itself). Returns the limits as they are now.
 */
async function setStatus(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  before: Limit[],
  status: Limit['status'],
  reason: (l: Limit) => string,
): Promise<Limit[]> {
  if (!before.length) return []
  const now = clock.now()
  const after = before.map((l) => ({ ...l, status, revision: l.revision + 1, updatedAt: now.toISOString() }))
  for (const revision of new Set(before.map((l) => l.revision))) {
    await trx
      .updateTable('limit_function')
      .set({ status, revision: revision + 1, updated_at: now })
      .where(
        'id',
        'in',
        before.filter((l) => l.revision === revision).map((l) => l.id),
      )
      .execute()
  }
  await trx
    .insertInto('limit_revision')
    .values(
      after.map((l) => ({
        limit_id: l.id,
        revision: l.revision,
        snapshot: JSON.stringify(limitSnapshot(l)),
        changed_by: ctx.actorId,
        changed_at: now,
        change_request_id: null,
        reason: reason(l),
      })),
    )
    .execute()
  await appendAudit(
    trx,
    clock,
    ctx,
    after.map((l, i) => ({
      action: status === 'retired' ? 'limit.retire' : 'limit.activate',
      entityType: 'Limit',
      entityId: l.id,
      before: limitSnapshot(before[i]),
      after: limitSnapshot(l),
      reason: reason(l),
    })),
  )
  return after
}

/**
 * Writes the demo register into the demo plant (sites, areas and accounts must exist), inside the caller's transaction:
 * processes, then instruments and limits drafted by the safety engineer through the register's services (the
 * operating-window check refuses a bad row), then most limits put in service as the approved baseline; a few stay
 * drafts and two are retired. Returns the number of limits written.
 */
export async function seedDemoRegister(trx: Trx, clock: Clock): Promise<number> {
  const engineer = await actor(trx, 'FHR', 'safety_engineer')
  const approver = await actor(trx, 'FHR', 'approver')
  const areas = await trx
    .selectFrom('area')
    .innerJoin('site', 'site.id', 'area.site_id')
    .select(['area.id', 'area.site_id', 'area.name', 'site.code'])
    .execute()
  const now = clock.now()
  let count = 0
  for (const p of DEMO_REGISTER) {
    const area = areas.find((a) => a.code === p.site && a.name === p.area)
    if (!area) throw new Error(`demo register: no area ${p.area} at ${p.site}`)
    const row = await trx
      .insertInto('process')
      .values({
        area_id: area.id,
        site_id: area.site_id,
        name: p.name,
        description: p.description,
        created_at: now,
        updated_at: now,
      })
      .returningAll()
      .executeTakeFirstOrThrow()
    await appendAudit(trx, clock, engineer, {
      action: 'process.create',
      entityType: 'Process',
      entityId: row.id,
      after: toProcess(row),
    })
    const instrumentIds = new Map<string, number>()
    for (const i of p.instruments) {
      instrumentIds.set(
        i.tag,
        await insertInstrument(
          trx,
          clock,
          engineer,
          CreateInstrumentInputSchema.parse({ ...i, processId: row.id }),
          row,
        ),
      )
    }
    const fate = new Map<number, { status: LimitSpec['status']; retiredReason?: string }>()
    for (const { on, status, retiredReason, ...fields } of p.limits) {
      const ids = on.map((tag) => {
        const id = instrumentIds.get(tag)
        if (id === undefined) throw new Error(`demo register: ${fields.tag} names unknown instrument ${tag}`)
        return id
      })
      const id = await insertLimit(
        trx,
        clock,
        engineer,
        CreateLimitInputSchema.parse({ ...fields, processId: row.id, instrumentIds: ids }),
        row,
      )
      fate.set(id, { status, retiredReason })
      count++
    }
    const drafts = await listLimits(trx, { siteIds: [row.site_id], processIds: [row.id] }, [], { limit: 1000 })
    const voted = await findInstrumentIdsByLimitIds(
      trx,
      drafts.map((d) => d.id),
    )
    const toActivate = drafts
      .map((d) => toLimit(d, voted.get(d.id) ?? []))
      .filter((l) => fate.get(l.id)?.status !== 'proposed')
    const active = await setStatus(trx, clock, approver, toActivate, 'active', () => 'demo baseline approved')
    await setStatus(
      trx,
      clock,
      approver,
      active.filter((l) => fate.get(l.id)?.status === 'retired'),
      'retired',
      (l) => fate.get(l.id)?.retiredReason ?? 'demo: retired',
    )
  }
  return count
}
