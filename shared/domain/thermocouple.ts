import { OutOfRangeError } from './errors.ts'

/**
 * ITS-90 thermocouple reference functions (reference junction 0 °C) for the letter-designated types.
 * Coefficients: NIST SRD 60 / NIST Monograph 175 (same functions as IEC 60584-1), transcribed from
 * ../shared/reference/thermocouples.md. E in mV, t in °C (t90).
 *
 * Inverse: the NIST inverse polynomial gives the starting value; a bracketed Newton iteration on the forward
 * function then refines it, so t(E(t)) = t to far better than 0.001 °C. The inverse covers the whole forward range
 * (also below −200 °C, −210 °C for J, −50 °C for R/S where NIST gives no inverse polynomial), except type B,
 * which refuses emfs below 0.291 mV (250 °C): see `thermocoupleTemperature`.
 */

/** Letter-designated thermocouple types supported. */
export const TC_TYPES = ['B', 'E', 'J', 'K', 'N', 'R', 'S', 'T'] as const

/** A letter-designated thermocouple type. */
export type TcType = (typeof TC_TYPES)[number]

interface ForwardPiece { tLow: number, tHigh: number, c: readonly number[] }

/** One NIST inverse sub-range: t = Σ d_i·E^i for eLow ≤ E ≤ eHigh, with its stated error band (°C). */
interface InversePiece { tLow: number, tHigh: number, eLow: number, eHigh: number, errLow: number, errHigh: number, d: readonly number[] }

interface TcDefinition { forward: readonly ForwardPiece[], inverse: readonly InversePiece[] }

// Coefficient tables: NIST SRD 60 allcoeff.tab via ../shared/reference/thermocouples.md (copied digit for digit).
// R and S inverse sub-ranges overlap; eHigh here is the E boundary NIST uses to choose between them
// (R: 1.923 / 11.361 / 19.739 mV; S: 1.874 / 10.332 / 17.536 mV).
const TABLES: Record<TcType, TcDefinition> = {
  B: {
    forward: [
      { tLow: 0, tHigh: 630.615, c: [0.000000000000e+00, -2.465081834600e-04, 5.904042117100e-06, -1.325793163600e-09, 1.566829190100e-12, -1.694452924000e-15, 6.299034709400e-19] },
      { tLow: 630.615, tHigh: 1820, c: [-3.893816862100e+00, 2.857174747000e-02, -8.488510478500e-05, 1.578528016400e-07, -1.683534486400e-10, 1.110979401300e-13, -4.451543103300e-17, 9.897564082100e-21, -9.379133028900e-25] },
    ],
    inverse: [
      { tLow: 250, tHigh: 700, eLow: 0.291, eHigh: 2.431, errLow: -0.02, errHigh: 0.03, d: [9.842332100e+01, 6.997150000e+02, -8.476530400e+02, 1.005264400e+03, -8.334595200e+02, 4.550854200e+02, -1.552303700e+02, 2.988675000e+01, -2.474286000e+00] },
      { tLow: 700, tHigh: 1820, eLow: 2.431, eHigh: 13.82, errLow: -0.01, errHigh: 0.02, d: [2.131507100e+02, 2.851050400e+02, -5.274288700e+01, 9.916080400e+00, -1.296530300e+00, 1.119587000e-01, -6.062519900e-03, 1.866169600e-04, -2.487858500e-06] },
    ],
  },
  E: {
    forward: [
      { tLow: -270, tHigh: 0, c: [0.000000000000e+00, 5.866550870800e-02, 4.541097712400e-05, -7.799804868600e-07, -2.580016084300e-08, -5.945258305700e-10, -9.321405866700e-12, -1.028760553400e-13, -8.037012362100e-16, -4.397949739100e-18, -1.641477635500e-20, -3.967361951600e-23, -5.582732872100e-26, -3.465784201300e-29] },
      { tLow: 0, tHigh: 1000, c: [0.000000000000e+00, 5.866550871000e-02, 4.503227558200e-05, 2.890840721200e-08, -3.305689665200e-10, 6.502440327000e-13, -1.919749550400e-16, -1.253660049700e-18, 2.148921756900e-21, -1.438804178200e-24, 3.596089948100e-28] },
    ],
    inverse: [
      { tLow: -200, tHigh: 0, eLow: -8.825, eHigh: 0, errLow: -0.01, errHigh: 0.03, d: [0.000000000e+00, 1.697728800e+01, -4.351497000e-01, -1.585969700e-01, -9.250287100e-02, -2.608431400e-02, -4.136019900e-03, -3.403403000e-04, -1.156489000e-05] },
      { tLow: 0, tHigh: 1000, eLow: 0, eHigh: 76.373, errLow: -0.02, errHigh: 0.02, d: [0.000000000e+00, 1.705703500e+01, -2.330175900e-01, 6.543558500e-03, -7.356274900e-05, -1.789600100e-06, 8.403616500e-08, -1.373587900e-09, 1.062982300e-11, -3.244708700e-14] },
    ],
  },
  J: {
    forward: [
      { tLow: -210, tHigh: 760, c: [0.000000000000e+00, 5.038118781500e-02, 3.047583693000e-05, -8.568106572000e-08, 1.322819529500e-10, -1.705295833700e-13, 2.094809069700e-16, -1.253839533600e-19, 1.563172569700e-23] },
      { tLow: 760, tHigh: 1200, c: [2.964562568100e+02, -1.497612778600e+00, 3.178710392400e-03, -3.184768670100e-06, 1.572081900400e-09, -3.069136905600e-13] },
    ],
    inverse: [
      { tLow: -210, tHigh: 0, eLow: -8.095, eHigh: 0, errLow: -0.05, errHigh: 0.03, d: [0.000000000e+00, 1.952826800e+01, -1.228618500e+00, -1.075217800e+00, -5.908693300e-01, -1.725671300e-01, -2.813151300e-02, -2.396337000e-03, -8.382332100e-05] },
      { tLow: 0, tHigh: 760, eLow: 0, eHigh: 42.919, errLow: -0.04, errHigh: 0.04, d: [0.000000000e+00, 1.978425000e+01, -2.001204000e-01, 1.036969000e-02, -2.549687000e-04, 3.585153000e-06, -5.344285000e-08, 5.099890000e-10] },
      { tLow: 760, tHigh: 1200, eLow: 42.919, eHigh: 69.553, errLow: -0.04, errHigh: 0.03, d: [-3.113581870e+03, 3.005436840e+02, -9.947732300e+00, 1.702766300e-01, -1.430334680e-03, 4.738860840e-06] },
    ],
  },
  K: {
    forward: [
      { tLow: -270, tHigh: 0, c: [0.000000000000e+00, 3.945012802500e-02, 2.362237359800e-05, -3.285890678400e-07, -4.990482877700e-09, -6.750905917300e-11, -5.741032742800e-13, -3.108887289400e-15, -1.045160936500e-17, -1.988926687800e-20, -1.632269748600e-23] },
      { tLow: 0, tHigh: 1372, c: [-1.760041368600e-02, 3.892120497500e-02, 1.855877003200e-05, -9.945759287400e-08, 3.184094571900e-10, -5.607284488900e-13, 5.607505905900e-16, -3.202072000300e-19, 9.715114715200e-23, -1.210472127500e-26] },
    ],
    inverse: [
      { tLow: -200, tHigh: 0, eLow: -5.891, eHigh: 0, errLow: -0.02, errHigh: 0.04, d: [0.000000000e+00, 2.517346200e+01, -1.166287800e+00, -1.083363800e+00, -8.977354000e-01, -3.734237700e-01, -8.663264300e-02, -1.045059800e-02, -5.192057700e-04] },
      { tLow: 0, tHigh: 500, eLow: 0, eHigh: 20.644, errLow: -0.05, errHigh: 0.04, d: [0.000000000e+00, 2.508355000e+01, 7.860106000e-02, -2.503131000e-01, 8.315270000e-02, -1.228034000e-02, 9.804036000e-04, -4.413030000e-05, 1.057734000e-06, -1.052755000e-08] },
      { tLow: 500, tHigh: 1372, eLow: 20.644, eHigh: 54.886, errLow: -0.05, errHigh: 0.06, d: [-1.318058000e+02, 4.830222000e+01, -1.646031000e+00, 5.464731000e-02, -9.650715000e-04, 8.802193000e-06, -3.110810000e-08] },
    ],
  },
  N: {
    forward: [
      { tLow: -270, tHigh: 0, c: [0.000000000000e+00, 2.615910596200e-02, 1.095748422800e-05, -9.384111155400e-08, -4.641203975900e-11, -2.630335771600e-12, -2.265343800300e-14, -7.608930079100e-17, -9.341966783500e-20] },
      { tLow: 0, tHigh: 1300, c: [0.000000000000e+00, 2.592939460100e-02, 1.571014188000e-05, 4.382562723700e-08, -2.526116979400e-10, 6.431181933900e-13, -1.006347151900e-15, 9.974533899200e-19, -6.086324560700e-22, 2.084922933900e-25, -3.068219615100e-29] },
    ],
    inverse: [
      { tLow: -200, tHigh: 0, eLow: -3.99, eHigh: 0, errLow: -0.02, errHigh: 0.03, d: [0.000000000e+00, 3.843684700e+01, 1.101048500e+00, 5.222931200e+00, 7.206052500e+00, 5.848858600e+00, 2.775491600e+00, 7.707516600e-01, 1.158266500e-01, 7.313886800e-03] },
      { tLow: 0, tHigh: 600, eLow: 0, eHigh: 20.613, errLow: -0.02, errHigh: 0.03, d: [0.000000000e+00, 3.868960000e+01, -1.082670000e+00, 4.702050000e-02, -2.121690000e-06, -1.172720000e-04, 5.392800000e-06, -7.981560000e-08] },
      { tLow: 600, tHigh: 1300, eLow: 20.613, eHigh: 47.513, errLow: -0.04, errHigh: 0.02, d: [1.972485000e+01, 3.300943000e+01, -3.915159000e-01, 9.855391000e-03, -1.274371000e-04, 7.767022000e-07] },
    ],
  },
  R: {
    forward: [
      { tLow: -50, tHigh: 1064.18, c: [0.000000000000e+00, 5.289617297650e-03, 1.391665897820e-05, -2.388556930170e-08, 3.569160010630e-11, -4.623476662980e-14, 5.007774410340e-17, -3.731058861910e-20, 1.577164823670e-23, -2.810386252510e-27] },
      { tLow: 1064.18, tHigh: 1664.5, c: [2.951579253160e+00, -2.520612513320e-03, 1.595645018650e-05, -7.640859475760e-09, 2.053052910240e-12, -2.933596681730e-16] },
      { tLow: 1664.5, tHigh: 1768.1, c: [1.522321182090e+02, -2.688198885450e-01, 1.712802804710e-04, -3.458957064530e-08, -9.346339710460e-15] },
    ],
    inverse: [
      { tLow: -50, tHigh: 250, eLow: -0.226, eHigh: 1.923, errLow: -0.02, errHigh: 0.02, d: [0.000000000e+00, 1.889138000e+02, -9.383529000e+01, 1.306861900e+02, -2.270358000e+02, 3.514565900e+02, -3.895390000e+02, 2.823947100e+02, -1.260728100e+02, 3.135361100e+01, -3.318776900e+00] },
      { tLow: 250, tHigh: 1200, eLow: 1.923, eHigh: 11.361, errLow: -0.005, errHigh: 0.005, d: [1.334584505e+01, 1.472644573e+02, -1.844024844e+01, 4.031129726e+00, -6.249428360e-01, 6.468412046e-02, -4.458750426e-03, 1.994710149e-04, -5.313401790e-06, 6.481976217e-08] },
      { tLow: 1064, tHigh: 1664.5, eLow: 11.361, eHigh: 19.739, errLow: -0.0005, errHigh: 0.001, d: [-8.199599416e+01, 1.553962042e+02, -8.342197663e+00, 4.279433549e-01, -1.191577910e-02, 1.492290091e-04] },
      { tLow: 1664.5, tHigh: 1768.1, eLow: 19.739, eHigh: 21.103, errLow: -0.001, errHigh: 0.002, d: [3.406177836e+04, -7.023729171e+03, 5.582903813e+02, -1.952394635e+01, 2.560740231e-01] },
    ],
  },
  S: {
    forward: [
      { tLow: -50, tHigh: 1064.18, c: [0.000000000000e+00, 5.403133086310e-03, 1.259342897400e-05, -2.324779686890e-08, 3.220288230360e-11, -3.314651963890e-14, 2.557442517860e-17, -1.250688713930e-20, 2.714431761450e-24] },
      { tLow: 1064.18, tHigh: 1664.5, c: [1.329004440850e+00, 3.345093113440e-03, 6.548051928180e-06, -1.648562592090e-09, 1.299896051740e-14] },
      { tLow: 1664.5, tHigh: 1768.1, c: [1.466282326360e+02, -2.584305167520e-01, 1.636935746410e-04, -3.304390469870e-08, -9.432236906120e-15] },
    ],
    inverse: [
      { tLow: -50, tHigh: 250, eLow: -0.235, eHigh: 1.874, errLow: -0.02, errHigh: 0.02, d: [0.000000000e+00, 1.849494600e+02, -8.005040620e+01, 1.022374300e+02, -1.522485920e+02, 1.888213430e+02, -1.590859410e+02, 8.230278800e+01, -2.341819440e+01, 2.797862600e+00] },
      { tLow: 250, tHigh: 1200, eLow: 1.874, eHigh: 10.332, errLow: -0.01, errHigh: 0.01, d: [1.291507177e+01, 1.466298863e+02, -1.534713402e+01, 3.145945973e+00, -4.163257839e-01, 3.187963771e-02, -1.291637500e-03, 2.183475087e-05, -1.447379511e-07, 8.211272125e-09] },
      { tLow: 1064, tHigh: 1664.5, eLow: 10.332, eHigh: 17.536, errLow: -0.0002, errHigh: 0.0002, d: [-8.087801117e+01, 1.621573104e+02, -8.536869453e+00, 4.719686976e-01, -1.441693666e-02, 2.081618890e-04] },
      { tLow: 1664.5, tHigh: 1768.1, eLow: 17.536, eHigh: 18.693, errLow: -0.002, errHigh: 0.002, d: [5.333875126e+04, -1.235892298e+04, 1.092657613e+03, -4.265693686e+01, 6.247205420e-01] },
    ],
  },
  T: {
    forward: [
      { tLow: -270, tHigh: 0, c: [0.000000000000e+00, 3.874810636400e-02, 4.419443434700e-05, 1.184432310500e-07, 2.003297355400e-08, 9.013801955900e-10, 2.265115659300e-11, 3.607115420500e-13, 3.849393988300e-15, 2.821352192500e-17, 1.425159477900e-19, 4.876866228600e-22, 1.079553927000e-24, 1.394502706200e-27, 7.979515392700e-31] },
      { tLow: 0, tHigh: 400, c: [0.000000000000e+00, 3.874810636400e-02, 3.329222788000e-05, 2.061824340400e-07, -2.188225684600e-09, 1.099688092800e-11, -3.081575877200e-14, 4.547913529000e-17, -2.751290167300e-20] },
    ],
    inverse: [
      { tLow: -200, tHigh: 0, eLow: -5.603, eHigh: 0, errLow: -0.02, errHigh: 0.04, d: [0.000000000e+00, 2.594919200e+01, -2.131696700e-01, 7.901869200e-01, 4.252777700e-01, 1.330447300e-01, 2.024144600e-02, 1.266817100e-03] },
      { tLow: 0, tHigh: 400, eLow: 0, eHigh: 20.872, errLow: -0.03, errHigh: 0.03, d: [0.000000000e+00, 2.592800000e+01, -7.602961000e-01, 4.637791000e-02, -2.165394000e-03, 6.048144000e-05, -7.293422000e-07] },
    ],
  },
}

// Type K exponential term, 0 °C ≤ t ≤ 1372 °C only: a0·exp(a1·(t − a2)²) [NIST SRD 60 via thermocouples.md]
const K_A0 = 0.1185976
const K_A1 = -0.1183432e-3
const K_A2 = 126.9686

// Type B inverse lower limit: NIST gives the inverse from 250 °C / 0.291 mV (thermocouples.md, valid ranges).
const B_EMF_MIN = 0.291

// Tolerance on range edges for values that came through a unit conversion (e.g. 2501.6 °F → 1372.0000000001 °C).
const EDGE_EPS = 1e-9

const B_EXPLANATION = 'a type B thermocouple gives almost no emf at low temperature: the emf falls slightly below zero '
  + 'from 0 °C to a minimum of about −0.0026 mV near 21 °C, is back at zero near 42 °C and reaches only about 0.033 mV at 100 °C, '
  + 'so a low emf matches two temperatures or is lost in the measurement error; NIST gives the type B inverse only from '
  + '250 °C (0.291 mV) and the product does not convert emfs below that'

function horner(coeffs: readonly number[], x: number): number {
  let sum = 0
  for (let i = coeffs.length - 1; i >= 0; i--) sum = sum * x + coeffs[i]!
  return sum
}

function hornerDerivative(coeffs: readonly number[], x: number): number {
  let sum = 0
  for (let i = coeffs.length - 1; i >= 1; i--) sum = sum * x + i * coeffs[i]!
  return sum
}

function forwardPiece(type: TcType, t: number): ForwardPiece {
  const pieces = TABLES[type].forward
  // Sub-range boundaries belong to the upper piece (the pieces agree there to well under 1 µV).
  for (const piece of pieces) if (t < piece.tHigh) return piece
  return pieces[pieces.length - 1]!
}

/** Forward and inverse range of a type's reference function (°C and mV, inclusive). */
export interface TcRange { tMin: number, tMax: number, emfMin: number, emfMax: number }

function checkType(type: TcType): void {
  if (!Object.hasOwn(TABLES, type)) throw new TypeError(`Unknown thermocouple type '${String(type)}'`)
}

function forwardRaw(type: TcType, t: number): number {
  const piece = forwardPiece(type, t)
  let e = horner(piece.c, t)
  if (type === 'K' && t >= 0) e += K_A0 * Math.exp(K_A1 * (t - K_A2) ** 2)
  return e
}

function derivativeRaw(type: TcType, t: number): number {
  const piece = forwardPiece(type, t)
  let s = hornerDerivative(piece.c, t)
  if (type === 'K' && t >= 0) s += K_A0 * Math.exp(K_A1 * (t - K_A2) ** 2) * 2 * K_A1 * (t - K_A2)
  return s
}

function tRange(type: TcType): { tMin: number, tMax: number } {
  const pieces = TABLES[type].forward
  return { tMin: pieces[0]!.tLow, tMax: pieces[pieces.length - 1]!.tHigh }
}

/**
 * Valid ranges of a type: forward t range (°C) and the emf range the inverse accepts (mV). For type B the inverse
 * starts at 0.291 mV (≈ 250 °C); for the others it covers E(tMin) … E(tMax).
 */
export function thermocoupleRange(type: TcType): TcRange {
  checkType(type)
  const { tMin, tMax } = tRange(type)
  return { tMin, tMax, emfMin: type === 'B' ? B_EMF_MIN : forwardRaw(type, tMin), emfMax: forwardRaw(type, tMax) }
}

function clampToRange(type: TcType, t: number): number {
  const { tMin, tMax } = tRange(type)
  if (!Number.isFinite(t) || t < tMin - EDGE_EPS || t > tMax + EDGE_EPS) {
    throw new OutOfRangeError('temperature', t, tMin, tMax, '°C', `the type ${type} reference function is defined from ${tMin} to ${tMax} °C`)
  }
  return Math.min(tMax, Math.max(tMin, t))
}

/** ITS-90 emf E(t) in mV of a type at t °C with the reference junction at 0 °C; throws OutOfRangeError outside the function's range. */
export function thermocoupleEmf(type: TcType, tC: number): number {
  checkType(type)
  return forwardRaw(type, clampToRange(type, tC))
}

/** Sensitivity dE/dt in mV/°C of a type at t °C (derivative of the reference function). */
export function thermocoupleSeebeck(type: TcType, tC: number): number {
  checkType(type)
  return derivativeRaw(type, clampToRange(type, tC))
}

/** The NIST inverse polynomial value t(E) (approximate, within the stated error band), or undefined outside its sub-ranges. */
export function thermocoupleInverseApprox(type: TcType, emfMv: number): number | undefined {
  checkType(type)
  const pieces = TABLES[type].inverse
  if (!(emfMv >= pieces[0]!.eLow && emfMv <= pieces[pieces.length - 1]!.eHigh)) return undefined
  for (const piece of pieces) if (emfMv <= piece.eHigh) return horner(piece.d, emfMv)
  return undefined
}

/**
 * Temperature t in °C of a type for an emf in mV (reference junction 0 °C). Starts from the NIST inverse polynomial
 * and refines by bracketed Newton iteration on the forward function (|Δt| < 1e-9 °C), so it is the exact inverse of
 * `thermocoupleEmf`. Throws OutOfRangeError outside `thermocoupleRange(type).emfMin … emfMax`; for type B that
 * refuses everything below 0.291 mV (250 °C) because the low end is ambiguous (see the error message).
 */
export function thermocoupleTemperature(type: TcType, emfMv: number): number {
  const range = thermocoupleRange(type)
  if (!Number.isFinite(emfMv) || emfMv < range.emfMin || emfMv > range.emfMax) {
    const explanation = type === 'B' && emfMv < range.emfMin
      ? B_EXPLANATION
      : `the type ${type} reference function covers ${range.tMin} to ${range.tMax} °C`
    throw new OutOfRangeError('emf', emfMv, range.emfMin, range.emfMax, 'mV', explanation)
  }
  // Bracket [lo, hi] with E(lo) ≤ emf ≤ E(hi). E(t) rises monotonically over each forward range, except type B
  // below about 21 °C; the type B bracket starts at 200 °C (E = 0.178 mV < 0.291 mV).
  let lo = type === 'B' ? 200 : range.tMin
  let hi = range.tMax
  const start = thermocoupleInverseApprox(type, emfMv)
  let t = start === undefined ? (lo + hi) / 2 : Math.min(hi, Math.max(lo, start))
  for (let i = 0; i < 200; i++) {
    const f = forwardRaw(type, t) - emfMv
    if (f === 0) return t
    if (f < 0) lo = t
    else hi = t
    const slope = derivativeRaw(type, t)
    let next = t - f / slope
    if (!(slope > 0) || !(next > lo && next < hi)) next = (lo + hi) / 2
    if (Math.abs(next - t) < 1e-10 || hi - lo < 1e-10) return next
    t = next
  }
  return t
}

/** mV a source must inject at the instrument terminals (cold junction at tCj °C) to simulate tHot °C: E(tHot) − E(tCj). */
export function mvSourceValue(type: TcType, tHotC: number, tCjC: number): number {
  return thermocoupleEmf(type, tHotC) - thermocoupleEmf(type, tCjC)
}

/**
 * Hot-junction temperature in °C from an emf measured at terminals at tCj °C, by the emf-domain method:
 * t = t(E_meas + E(tCj)). (Adding tCj to t(E_meas) is wrong except for a linear thermocouple.)
 */
export function temperatureFromMeasured(type: TcType, emfMeasuredMv: number, tCjC: number): number {
  return thermocoupleTemperature(type, emfMeasuredMv + thermocoupleEmf(type, tCjC))
}
