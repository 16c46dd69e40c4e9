// Average probability of failure on demand (PFDavg) of a safety instrumented function, low-demand mode.
// Equations: IEC 61508-6 Annex B (Ed. 2 group-time forms) and the simplified forms of ISA-TR84.00.02, as written out in
// docs/domain/sif-reliability.md; formulas, extensions and edges: docs/domain/sif-reliability.md.
// Estimates from entered data: hardware fault tolerance and systematic capability are not assessed here.
import { intervalHours } from './due-dates.ts'

/** Voting of identical channels in one subsystem. */
export type Architecture = '1oo1' | '1oo2' | '2oo2' | '2oo3' | '1oo3' | '1oo2D'
/** Place of a subsystem in the function. */
export type SubsystemRole = 'sensor' | 'logic' | 'final_element'
/** A safety integrity level. */
export type Sil = 1 | 2 | 3 | 4
/** The SIL band a PFDavg falls in; 'none' at PFDavg ≥ 0.1. */
export type SilBand = Sil | 'none'

/**
 * One subsystem of a SIF (docs/domain/sif-reliability.md, Inputs);
 * rates per hour, β and coverage as fractions 0–1.
 */
export interface Subsystem {
  role: SubsystemRole
  architecture: Architecture
  /** λDU per channel, h⁻¹ */
  lambdaDu: number
  /** common-cause fraction of undetected failures */
  beta: number
  /**
   * mean time to restoration, h, of a detected failure (MTTR: detection + repair). Also the mean repair time of an
   * undetected failure found at a proof test unless `mrtHours` is given.
   */
  mttrHours: number
  /** optional mean repair time, h, of a failure found at a proof test (MRT, IEC 61508-6 Ed. 2); default: mttrHours */
  mrtHours?: number
  /** proof-test interval in months (1 month = 730 h) */
  testIntervalMonths: number
  /** proof-test coverage C, 0–1; 1 = the proof test reveals every dangerous undetected failure */
  testCoverage: number
  /** mission time; failures the proof test misses are found only then. Required when testCoverage < 1. */
  missionTimeYears: number | null
  /** optional λDD per channel, h⁻¹ (default 0) */
  lambdaDd?: number
  /** optional common-cause fraction of detected failures (default: beta) */
  betaD?: number
  /**
   * optional λSD per channel, h⁻¹ (default 0): safe detected failures;
   * a 1oo2D channel that detects one drops out
   */
  lambdaSd?: number
}

/** Options for one subsystem evaluation. */
export interface SubsystemPfdOptions {
  /** proof-test interval actually achieved, h (default: the design interval) */
  testIntervalHours?: number
  /** evaluate with another voting, e.g. the degraded voting while one channel is bypassed */
  architecture?: Architecture
}

/** Hours per year (8 760 h). */
export const HOURS_PER_YEAR = 8760

/** Upper (exclusive) PFDavg bound of each SIL band, low-demand mode (IEC 61508-1 Table 2 / IEC 61511-1 Table 4). */
export const SIL_PFD_UPPER: Readonly<Record<Sil, number>> = { 1: 1e-1, 2: 1e-2, 3: 1e-3, 4: 1e-4 }

/**
 * Default voting while one channel is bypassed. A bypassed channel is held in its non-trip state (defeated), so the
 * remaining channels must still reach the vote: 2oo3 → 2oo2, 1oo3 → 1oo2, 1oo2 → 1oo1; 2oo2 and 1oo1 are 'lost'
 * (the subsystem cannot act). Logic that re-votes on bypass (e.g. 2oo3 → 1oo2) is entered per bypass.
 */
export const DEFAULT_DEGRADED_ARCHITECTURE: Readonly<Record<Architecture, Architecture | 'lost'>> = {
  '1oo1': 'lost',
  '1oo2': '1oo1',
  '2oo2': 'lost',
  '2oo3': '2oo2',
  '1oo3': '1oo2',
  '1oo2D': '1oo1',
}

function fraction(value: number, name: string): void {
  if (!(value >= 0 && value <= 1)) throw new RangeError(`${name} must be between 0 and 1`)
}

function nonNegative(value: number, name: string): void {
  if (!(value >= 0) || !Number.isFinite(value)) throw new RangeError(`${name} must be a finite number ≥ 0`)
}

/**
 * λDU·T1 above which the simplified equations no longer hold: they assume λ·T ≪ 1 (IEC 61508-6 Annex B states the
 * assumption; the 0.1 threshold is common practice, from memory). Above it the exact time average is used.
 */
export const SIMPLIFIED_LAMBDA_T_MAX = 0.1

/** How a subsystem PFDavg was obtained. */
export interface SubsystemPfdDetail {
  pfd: number
  /** 'simplified': IEC 61508-6 Annex B equations; 'exact': time average of the exponential unavailability */
  method: 'simplified' | 'exact'
  /** λDU·T1 of the subsystem (with T1 the interval over which undetected failures stay hidden) */
  lambdaT: number
  /** a sentence for the user when λDU·T1 exceeds SIMPLIFIED_LAMBDA_T_MAX, else null */
  warning: string | null
}

/** PFDavg of one subsystem (IEC 61508-6 Annex B group-time form; see docs/domain/sif-reliability.md). */
export function subsystemPfd(subsystem: Subsystem, options: SubsystemPfdOptions = {}): number {
  return subsystemPfdDetail(subsystem, options).pfd
}

/**
 * PFDavg of one subsystem with the method used. The simplified equations while λDU·T1 ≤ 0.1; above it the exact
 * time average of the exponential model (never above 1) and a warning (docs/domain/sif-reliability.md, "Large λ·T").
 */
export function subsystemPfdDetail(subsystem: Subsystem, options: SubsystemPfdOptions = {}): SubsystemPfdDetail {
  const lambdaDu = subsystem.lambdaDu
  const lambdaDd = subsystem.lambdaDd ?? 0
  const lambdaSd = subsystem.lambdaSd ?? 0
  const beta = subsystem.beta
  const betaD = subsystem.betaD ?? beta
  const mttr = subsystem.mttrHours
  const mrt = subsystem.mrtHours ?? mttr
  const coverage = subsystem.testCoverage
  const ti = options.testIntervalHours ?? intervalHours(subsystem.testIntervalMonths)
  const architecture = options.architecture ?? subsystem.architecture
  nonNegative(lambdaDu, 'lambdaDu')
  nonNegative(lambdaDd, 'lambdaDd')
  nonNegative(lambdaSd, 'lambdaSd')
  nonNegative(mttr, 'mttrHours')
  nonNegative(mrt, 'mrtHours')
  fraction(beta, 'beta')
  fraction(betaD, 'betaD')
  fraction(coverage, 'testCoverage')
  if (!(ti > 0) || !Number.isFinite(ti)) throw new RangeError('proof-test interval must be > 0 h')

  let fullInterval = ti
  if (coverage < 1) {
    const years = subsystem.missionTimeYears
    if (years === null || !(years > 0)) throw new RangeError('mission time is required when test coverage is below 1')
    // failures the proof test misses stay hidden until the end of the mission, never shorter than the interval
    fullInterval = Math.max(years * HOURS_PER_YEAR, ti)
  }

  if (!Object.hasOwn(DEFAULT_DEGRADED_ARCHITECTURE, architecture)) {
    throw new RangeError(`unknown architecture: ${String(architecture)}`)
  }

  const lambdaD = lambdaDu + lambdaDd
  // λDU times the time an undetected failure stays hidden: T1 for what the test finds, the mission for what it misses
  const lambdaT = lambdaDu * (coverage * ti + (1 - coverage) * fullInterval)
  if (lambdaD === 0) return { pfd: 0, method: 'simplified', lambdaT, warning: null }
  // mean hidden time of an undetected failure counted over the k-th of a group of failures (k = 2, 3, 4)
  const hidden = (k: number): number => (coverage * ti) / k + ((1 - coverage) * fullInterval) / k
  const groupTime = (k: number): number => (lambdaDu / lambdaD) * (hidden(k) + mrt) + (lambdaDd / lambdaD) * mttr
  const tCE = groupTime(2)
  const tGE = groupTime(3)
  const tG2E = groupTime(4)
  const independent = (1 - betaD) * lambdaDd + (1 - beta) * lambdaDu
  const commonCause = betaD * lambdaDd * mttr + beta * lambdaDu * (hidden(2) + mrt)

  let simplified: number
  switch (architecture) {
    case '1oo1':
      simplified = lambdaD * tCE
      break
    case '2oo2':
      simplified = 2 * lambdaD * tCE
      break
    case '1oo2':
      simplified = 2 * independent ** 2 * tCE * tGE + commonCause
      break
    case '2oo3':
      simplified = 6 * independent ** 2 * tCE * tGE + commonCause
      break
    case '1oo3':
      simplified = 6 * independent ** 3 * tCE * tGE * tG2E + commonCause
      break
    case '1oo2D': {
      // IEC 61508-6 Ed. 2 B.3.2.2.4 (from memory): a channel that detects a dangerous or safe failure in itself
      // drops out and leaves the other to act, so λDD and λSD count with MTTR in t'CE, and t'GE = T1/3 + MRT.
      const lambdaAll = lambdaDu + lambdaDd + lambdaSd
      const tCEd = (lambdaDu * (hidden(2) + mrt) + (lambdaDd + lambdaSd) * mttr) / lambdaAll
      const tGEd = hidden(3) + mrt
      simplified =
        2 * (1 - beta) * lambdaDu * ((1 - beta) * lambdaDu + (1 - betaD) * lambdaDd + lambdaSd) * tCEd * tGEd +
        commonCause
      break
    }
  }
  if (lambdaT <= SIMPLIFIED_LAMBDA_T_MAX)
    return { pfd: Math.min(1, simplified), method: 'simplified', lambdaT, warning: null }

  const exact = exactPfd(architecture, {
    lambdaDu,
    lambdaDd,
    beta,
    betaD,
    mttr,
    mrt,
    coverage,
    ti,
    horizon: coverage < 1 ? fullInterval : ti,
  })
  return {
    pfd: exact,
    method: 'exact',
    lambdaT,
    warning:
      `λDU·T1 = ${Number(lambdaT.toPrecision(3))} exceeds ${SIMPLIFIED_LAMBDA_T_MAX}: ` +
      'the simplified equations assume ' +
      'λ·T ≪ 1, so the PFDavg shown is the exact time average of the exponential model. ' +
      'A test interval this long ' +
      'for this failure rate leaves the function unavailable for much of the time.',
  }
}

interface ExactInput {
  lambdaDu: number
  lambdaDd: number
  beta: number
  betaD: number
  mttr: number
  mrt: number
  coverage: number
  ti: number
  horizon: number
}

/**
 * Exact time average over `horizon` of the unavailability from undetected failures, with exponential laws:
 * a channel is failed at t with probability 1 − exp(−(1−β)·λDU·h(t)),
 * a common cause with 1 − exp(−β·λDU·h(t)),
 * h(t) = C·(t mod T1) + (1 − C)·t the time since the failure was last revealable. The channels combine by their
 * vote (k-out-of-n of independent channels; 1oo2D as 1oo2). Repair time and detected failures add the small
 * terms of the simplified equations (λDU·MRT, λDD·MTTR). Composite Simpson rule, 2 000 steps per test interval.
 */
function exactPfd(architecture: Architecture, x: ExactInput): number {
  const n = architecture === '1oo1' ? 1 : architecture === '1oo3' || architecture === '2oo3' ? 3 : 2
  const failuresToLose = { '1oo1': 1, '2oo2': 1, '1oo2': 2, '1oo2D': 2, '2oo3': 2, '1oo3': 3 }[architecture]
  // unavailability at time s into the j-th test interval (t = j·T1 + s); s runs to T1 inclusive (left limit)
  const q = (j: number, sinceTest: number): number => {
    const h = x.coverage * sinceTest + (1 - x.coverage) * (j * x.ti + sinceTest)
    const p = 1 - Math.exp(-(1 - x.beta) * x.lambdaDu * h)
    let lost = 0
    // probability that at least `failuresToLose` of n independent channels have failed
    for (let k = failuresToLose; k <= n; k++) lost += binomial(n, k) * p ** k * (1 - p) ** (n - k)
    const common = 1 - Math.exp(-x.beta * x.lambdaDu * h)
    return 1 - (1 - common) * (1 - lost)
  }
  const intervals = Math.max(1, Math.round(x.horizon / x.ti))
  const steps = 2000
  const ds = x.ti / steps
  let total = 0
  for (let j = 0; j < intervals; j++) {
    let sum = q(j, 0) + q(j, x.ti)
    for (let i = 1; i < steps; i++) sum += (i % 2 === 1 ? 4 : 2) * q(j, i * ds)
    total += (sum * ds) / 3
  }
  const average = total / (intervals * x.ti)
  const series = architecture === '2oo2' ? 2 : 1
  const repair =
    failuresToLose === 1
      ? series * (x.lambdaDu * x.mrt + x.lambdaDd * x.mttr)
      : x.beta * x.lambdaDu * x.mrt + x.betaD * x.lambdaDd * x.mttr
  return Math.min(1, average + repair)
}

function binomial(n: number, k: number): number {
  let r = 1
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i
  return r
}

/**
 * PFDavg of the whole function: the sum over its subsystems (IEC 61508-6 B.2), a rare-event approximation that is
 * capped at 1 (a probability).
 */
export function sifPfd(subsystems: Subsystem[]): number {
  return Math.min(
    1,
    subsystems.reduce((sum, s) => sum + subsystemPfd(s), 0),
  )
}

/** Warnings of the subsystems whose λDU·T1 is too large for the simplified equations. */
export function pfdWarnings(subsystems: Subsystem[]): string[] {
  return subsystems.flatMap((s) => {
    const w = subsystemPfdDetail(s).warning
    return w === null ? [] : [`${s.role.replace('_', ' ')} (${s.architecture}): ${w}`]
  })
}

/** Risk reduction factor 1 / PFDavg (Infinity for a PFDavg of 0). */
export function rrf(pfd: number): number {
  if (!(pfd >= 0)) throw new RangeError('PFDavg must be ≥ 0')
  return pfd === 0 ? Infinity : 1 / pfd
}

// Strip binary noise before comparing with a band edge, so that a computed 0.0009999999999999998 counts as 1e-3.
function clean(pfd: number): number {
  return Number(pfd.toPrecision(12))
}

/**
 * SIL band of a PFDavg, low-demand mode; lower bounds inclusive (1e-3 is SIL 2), ≥ 0.1 is 'none'.
 * Below 1e-5 the answer stays 4: no claim beyond SIL 4 exists.
 */
export function silBand(pfd: number): SilBand {
  if (!(pfd >= 0)) throw new RangeError('PFDavg must be ≥ 0')
  const p = clean(pfd)
  if (p >= SIL_PFD_UPPER[1]) return 'none'
  if (p >= SIL_PFD_UPPER[2]) return 1
  if (p >= SIL_PFD_UPPER[3]) return 2
  if (p >= SIL_PFD_UPPER[4]) return 3
  return 4
}

/** A PFDavg held against a target SIL. */
export interface TargetComparison {
  targetSil: Sil
  pfd: number
  rrf: number
  band: SilBand
  /** the PFDavg must stay below this value (exclusive) */
  requiredPfdBelow: number
  meetsTarget: boolean
  /** requiredPfdBelow ÷ pfd: above 1 means headroom, below 1 shortfall */
  marginFactor: number
  explanation: string
}

/** Compares a PFDavg (design or effective) with the target SIL; the PFD band is only one of three constraints. */
export function compareToTarget(targetSil: Sil, pfd: number): TargetComparison {
  if (![1, 2, 3, 4].includes(targetSil)) throw new RangeError('target SIL must be 1, 2, 3 or 4')
  const band = silBand(pfd)
  const requiredPfdBelow = SIL_PFD_UPPER[targetSil]
  const meetsTarget = band !== 'none' && band >= targetSil
  const bandText = band === 'none' ? 'no SIL band' : `the SIL ${band} band`
  return {
    targetSil,
    pfd,
    rrf: rrf(pfd),
    band,
    requiredPfdBelow,
    meetsTarget,
    marginFactor: pfd === 0 ? Infinity : requiredPfdBelow / pfd,
    explanation:
      `PFDavg ${pfd.toPrecision(3)} lies in ${bandText}; ` +
      `SIL ${targetSil} needs PFDavg < ${requiredPfdBelow} → ${meetsTarget ? 'target met' : 'target not met'}`,
  }
}

/** Inputs for the effective PFDavg over a period: actual test intervals and bypass time. */
export interface EffectivePfdInput {
  subsystems: Subsystem[]
  /** intervals actually achieved, h, by role (default: the design interval) */
  actualIntervalHoursByRole?: Partial<Record<SubsystemRole, number>>
  bypassedHours: number
  periodHours: number
  /**
   * The bypass defeated one channel of the (first) subsystem with this role, not the whole function;
   * its voting degrades for that time (DEFAULT_DEGRADED_ARCHITECTURE unless given).
   */
  bypassedSingleChannel?: { role: SubsystemRole; degradedArchitecture?: Architecture | 'lost' } | null
}

/** Per-subsystem detail of an effective PFDavg. */
export interface EffectiveSubsystemPfd {
  role: SubsystemRole
  architecture: Architecture
  designIntervalHours: number
  actualIntervalHours: number
  designPfd: number
  actualPfd: number
  degradedArchitecture: Architecture | 'lost' | null
  degradedPfd: number | null
}

/** Effective PFDavg and its parts. */
export interface EffectivePfdResult {
  /** design intervals, no bypass */
  designPfd: number
  /** actual intervals, no bypass */
  actualIntervalPfd: number
  /** PFD while bypassed: 1 for a whole-function bypass, else with the degraded voting */
  pfdDuringBypass: number
  /** bypassed hours ÷ period hours */
  bypassFraction: number
  /** time-weighted: (1 − f) · actualIntervalPfd + f · pfdDuringBypass */
  pfd: number
  subsystems: EffectiveSubsystemPfd[]
}

/** Effective PFDavg over a period from actual test intervals and bypass time (time-weighted). */
export function effectivePfd(input: EffectivePfdInput): EffectivePfdResult {
  const { periodHours, bypassedHours } = input
  if (!(periodHours > 0) || !Number.isFinite(periodHours)) throw new RangeError('period must be > 0 h')
  nonNegative(bypassedHours, 'bypassedHours')
  if (bypassedHours > periodHours) throw new RangeError('bypassed hours exceed the period')
  const single = input.bypassedSingleChannel ?? null
  const bypassedIndex = single === null ? -1 : input.subsystems.findIndex((s) => s.role === single.role)
  if (single !== null && bypassedIndex < 0) throw new RangeError(`no ${single.role} subsystem to bypass a channel of`)

  const details = input.subsystems.map((s, i): EffectiveSubsystemPfd => {
    const designIntervalHours = intervalHours(s.testIntervalMonths)
    const actualIntervalHours = input.actualIntervalHoursByRole?.[s.role] ?? designIntervalHours
    const actualPfd = subsystemPfd(s, { testIntervalHours: actualIntervalHours })
    let degradedArchitecture: Architecture | 'lost' | null = null
    let degradedPfd: number | null = null
    if (i === bypassedIndex && single !== null) {
      degradedArchitecture = single.degradedArchitecture ?? DEFAULT_DEGRADED_ARCHITECTURE[s.architecture]
      degradedPfd =
        degradedArchitecture === 'lost'
          ? 1
          : subsystemPfd(s, { testIntervalHours: actualIntervalHours, architecture: degradedArchitecture })
    }
    return {
      role: s.role,
      architecture: s.architecture,
      designIntervalHours,
      actualIntervalHours,
      designPfd: subsystemPfd(s),
      actualPfd,
      degradedArchitecture,
      degradedPfd,
    }
  })

  const designPfd = Math.min(
    1,
    details.reduce((sum, d) => sum + d.designPfd, 0),
  )
  const actualIntervalPfd = Math.min(
    1,
    details.reduce((sum, d) => sum + d.actualPfd, 0),
  )
  // each part is a probability, never above 1, so a whole-function bypass (1) can never lower the figure
  const pfdDuringBypass =
    single === null
      ? 1
      : Math.min(
          1,
          details.reduce((sum, d) => sum + (d.degradedPfd ?? d.actualPfd), 0),
        )
  const bypassFraction = bypassedHours / periodHours
  return {
    designPfd,
    actualIntervalPfd,
    pfdDuringBypass,
    bypassFraction,
    pfd: (1 - bypassFraction) * actualIntervalPfd + bypassFraction * pfdDuringBypass,
    subsystems: details,
  }
}
