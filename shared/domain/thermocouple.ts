import { OutOfRangeError, withinRange } from './errors.ts'

/**
 * ITS-90 thermocouple reference functions (reference junction 0 °C) for the letter-designated types.
 * Coefficients: NIST SRD 60 / NIST Monograph 175 (same functions as IEC 60584-1), transcribed from
 * NIST SRD 60 (ITS-90 thermocouple database) and NIST Monograph 175. E in mV, t in °C (t90).
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

interface ForwardPiece {
  tLow: number
  tHigh: number
  c: readonly number[]
}

/** One NIST inverse sub-range: t = Σ d_i·E^i for eLow ≤ E ≤ eHigh, with its stated error band (°C). */
interface InversePiece {
  tLow: number
  tHigh: number
  eLow: number
  eHigh: number
  errLow: number
  errHigh: number
  d: readonly number[]
}

interface TcDefinition {
  forward: readonly ForwardPiece[]
  inverse: readonly InversePiece[]
}

// Coefficient tables: NIST SRD 60 allcoeff.tab (copied digit for digit).
// R and S inverse sub-ranges overlap; eHigh here is the E boundary NIST uses to choose between them
// (R: 1.923 / 11.361 / 19.739 mV; S: 1.874 / 10.332 / 17.536 mV).
const TABLES: Record<TcType, TcDefinition> = {
  B: {
    forward: [
      {
        tLow: 0,
        tHigh: 630.615,
        c: [
          0.0, -2.4650818346e-4, 5.9040421171e-6, -1.3257931636e-9, 1.5668291901e-12, -1.694452924e-15,
          6.2990347094e-19,
        ],
      },
      {
        tLow: 630.615,
        tHigh: 1820,
        c: [
          -3.8938168621, 2.857174747e-2, -8.4885104785e-5, 1.5785280164e-7, -1.6835344864e-10, 1.1109794013e-13,
          -4.4515431033e-17, 9.8975640821e-21, -9.3791330289e-25,
        ],
      },
    ],
    inverse: [
      {
        tLow: 250,
        tHigh: 700,
        eLow: 0.291,
        eHigh: 2.431,
        errLow: -0.02,
        errHigh: 0.03,
        d: [
          9.8423321e1, 6.99715e2, -8.4765304e2, 1.0052644e3, -8.3345952e2, 4.5508542e2, -1.5523037e2, 2.988675e1,
          -2.474286,
        ],
      },
      {
        tLow: 700,
        tHigh: 1820,
        eLow: 2.431,
        eHigh: 13.82,
        errLow: -0.01,
        errHigh: 0.02,
        d: [
          2.1315071e2, 2.8510504e2, -5.2742887e1, 9.9160804, -1.2965303, 1.119587e-1, -6.0625199e-3, 1.8661696e-4,
          -2.4878585e-6,
        ],
      },
    ],
  },
  E: {
    forward: [
      {
        tLow: -270,
        tHigh: 0,
        c: [
          0.0, 5.8665508708e-2, 4.5410977124e-5, -7.7998048686e-7, -2.5800160843e-8, -5.9452583057e-10,
          -9.3214058667e-12, -1.0287605534e-13, -8.0370123621e-16, -4.3979497391e-18, -1.6414776355e-20,
          -3.9673619516e-23, -5.5827328721e-26, -3.4657842013e-29,
        ],
      },
      {
        tLow: 0,
        tHigh: 1000,
        c: [
          0.0, 5.866550871e-2, 4.5032275582e-5, 2.8908407212e-8, -3.3056896652e-10, 6.502440327e-13, -1.9197495504e-16,
          -1.2536600497e-18, 2.1489217569e-21, -1.4388041782e-24, 3.5960899481e-28,
        ],
      },
    ],
    inverse: [
      {
        tLow: -200,
        tHigh: 0,
        eLow: -8.825,
        eHigh: 0,
        errLow: -0.01,
        errHigh: 0.03,
        d: [
          0.0, 1.6977288e1, -4.351497e-1, -1.5859697e-1, -9.2502871e-2, -2.6084314e-2, -4.1360199e-3, -3.403403e-4,
          -1.156489e-5,
        ],
      },
      {
        tLow: 0,
        tHigh: 1000,
        eLow: 0,
        eHigh: 76.373,
        errLow: -0.02,
        errHigh: 0.02,
        d: [
          0.0, 1.7057035e1, -2.3301759e-1, 6.5435585e-3, -7.3562749e-5, -1.7896001e-6, 8.4036165e-8, -1.3735879e-9,
          1.0629823e-11, -3.2447087e-14,
        ],
      },
    ],
  },
  J: {
    forward: [
      {
        tLow: -210,
        tHigh: 760,
        c: [
          0.0, 5.0381187815e-2, 3.047583693e-5, -8.568106572e-8, 1.3228195295e-10, -1.7052958337e-13, 2.0948090697e-16,
          -1.2538395336e-19, 1.5631725697e-23,
        ],
      },
      {
        tLow: 760,
        tHigh: 1200,
        c: [2.9645625681e2, -1.4976127786, 3.1787103924e-3, -3.1847686701e-6, 1.5720819004e-9, -3.0691369056e-13],
      },
    ],
    inverse: [
      {
        tLow: -210,
        tHigh: 0,
        eLow: -8.095,
        eHigh: 0,
        errLow: -0.05,
        errHigh: 0.03,
        d: [
          0.0, 1.9528268e1, -1.2286185, -1.0752178, -5.9086933e-1, -1.7256713e-1, -2.8131513e-2, -2.396337e-3,
          -8.3823321e-5,
        ],
      },
      {
        tLow: 0,
        tHigh: 760,
        eLow: 0,
        eHigh: 42.919,
        errLow: -0.04,
        errHigh: 0.04,
        d: [0.0, 1.978425e1, -2.001204e-1, 1.036969e-2, -2.549687e-4, 3.585153e-6, -5.344285e-8, 5.09989e-10],
      },
      {
        tLow: 760,
        tHigh: 1200,
        eLow: 42.919,
        eHigh: 69.553,
        errLow: -0.04,
        errHigh: 0.03,
        d: [-3.11358187e3, 3.00543684e2, -9.9477323, 1.7027663e-1, -1.43033468e-3, 4.73886084e-6],
      },
    ],
  },
  K: {
    forward: [
      {
        tLow: -270,
        tHigh: 0,
        c: [
          0.0, 3.9450128025e-2, 2.3622373598e-5, -3.2858906784e-7, -4.9904828777e-9, -6.7509059173e-11,
          -5.7410327428e-13, -3.1088872894e-15, -1.0451609365e-17, -1.9889266878e-20, -1.6322697486e-23,
        ],
      },
      {
        tLow: 0,
        tHigh: 1372,
        c: [
          -1.7600413686e-2, 3.8921204975e-2, 1.8558770032e-5, -9.9457592874e-8, 3.1840945719e-10, -5.6072844889e-13,
          5.6075059059e-16, -3.2020720003e-19, 9.7151147152e-23, -1.2104721275e-26,
        ],
      },
    ],
    inverse: [
      {
        tLow: -200,
        tHigh: 0,
        eLow: -5.891,
        eHigh: 0,
        errLow: -0.02,
        errHigh: 0.04,
        d: [
          0.0, 2.5173462e1, -1.1662878, -1.0833638, -8.977354e-1, -3.7342377e-1, -8.6632643e-2, -1.0450598e-2,
          -5.1920577e-4,
        ],
      },
      {
        tLow: 0,
        tHigh: 500,
        eLow: 0,
        eHigh: 20.644,
        errLow: -0.05,
        errHigh: 0.04,
        d: [
          0.0, 2.508355e1, 7.860106e-2, -2.503131e-1, 8.31527e-2, -1.228034e-2, 9.804036e-4, -4.41303e-5, 1.057734e-6,
          -1.052755e-8,
        ],
      },
      {
        tLow: 500,
        tHigh: 1372,
        eLow: 20.644,
        eHigh: 54.886,
        errLow: -0.05,
        errHigh: 0.06,
        d: [-1.318058e2, 4.830222e1, -1.646031, 5.464731e-2, -9.650715e-4, 8.802193e-6, -3.11081e-8],
      },
    ],
  },
  N: {
    forward: [
      {
        tLow: -270,
        tHigh: 0,
        c: [
          0.0, 2.6159105962e-2, 1.0957484228e-5, -9.3841111554e-8, -4.6412039759e-11, -2.6303357716e-12,
          -2.2653438003e-14, -7.6089300791e-17, -9.3419667835e-20,
        ],
      },
      {
        tLow: 0,
        tHigh: 1300,
        c: [
          0.0, 2.5929394601e-2, 1.571014188e-5, 4.3825627237e-8, -2.5261169794e-10, 6.4311819339e-13, -1.0063471519e-15,
          9.9745338992e-19, -6.0863245607e-22, 2.0849229339e-25, -3.0682196151e-29,
        ],
      },
    ],
    inverse: [
      {
        tLow: -200,
        tHigh: 0,
        eLow: -3.99,
        eHigh: 0,
        errLow: -0.02,
        errHigh: 0.03,
        d: [
          0.0, 3.8436847e1, 1.1010485, 5.2229312, 7.2060525, 5.8488586, 2.7754916, 7.7075166e-1, 1.1582665e-1,
          7.3138868e-3,
        ],
      },
      {
        tLow: 0,
        tHigh: 600,
        eLow: 0,
        eHigh: 20.613,
        errLow: -0.02,
        errHigh: 0.03,
        d: [0.0, 3.86896e1, -1.08267, 4.70205e-2, -2.12169e-6, -1.17272e-4, 5.3928e-6, -7.98156e-8],
      },
      {
        tLow: 600,
        tHigh: 1300,
        eLow: 20.613,
        eHigh: 47.513,
        errLow: -0.04,
        errHigh: 0.02,
        d: [1.972485e1, 3.300943e1, -3.915159e-1, 9.855391e-3, -1.274371e-4, 7.767022e-7],
      },
    ],
  },
  R: {
    forward: [
      {
        tLow: -50,
        tHigh: 1064.18,
        c: [
          0.0, 5.28961729765e-3, 1.39166589782e-5, -2.38855693017e-8, 3.56916001063e-11, -4.62347666298e-14,
          5.00777441034e-17, -3.73105886191e-20, 1.57716482367e-23, -2.81038625251e-27,
        ],
      },
      {
        tLow: 1064.18,
        tHigh: 1664.5,
        c: [
          2.95157925316, -2.52061251332e-3, 1.59564501865e-5, -7.64085947576e-9, 2.05305291024e-12, -2.93359668173e-16,
        ],
      },
      {
        tLow: 1664.5,
        tHigh: 1768.1,
        c: [1.52232118209e2, -2.68819888545e-1, 1.71280280471e-4, -3.45895706453e-8, -9.34633971046e-15],
      },
    ],
    inverse: [
      {
        tLow: -50,
        tHigh: 250,
        eLow: -0.226,
        eHigh: 1.923,
        errLow: -0.02,
        errHigh: 0.02,
        d: [
          0.0, 1.889138e2, -9.383529e1, 1.3068619e2, -2.270358e2, 3.5145659e2, -3.89539e2, 2.8239471e2, -1.2607281e2,
          3.1353611e1, -3.3187769,
        ],
      },
      {
        tLow: 250,
        tHigh: 1200,
        eLow: 1.923,
        eHigh: 11.361,
        errLow: -0.005,
        errHigh: 0.005,
        d: [
          1.334584505e1, 1.472644573e2, -1.844024844e1, 4.031129726, -6.24942836e-1, 6.468412046e-2, -4.458750426e-3,
          1.994710149e-4, -5.31340179e-6, 6.481976217e-8,
        ],
      },
      {
        tLow: 1064,
        tHigh: 1664.5,
        eLow: 11.361,
        eHigh: 19.739,
        errLow: -0.0005,
        errHigh: 0.001,
        d: [-8.199599416e1, 1.553962042e2, -8.342197663, 4.279433549e-1, -1.19157791e-2, 1.492290091e-4],
      },
      {
        tLow: 1664.5,
        tHigh: 1768.1,
        eLow: 19.739,
        eHigh: 21.103,
        errLow: -0.001,
        errHigh: 0.002,
        d: [3.406177836e4, -7.023729171e3, 5.582903813e2, -1.952394635e1, 2.560740231e-1],
      },
    ],
  },
  S: {
    forward: [
      {
        tLow: -50,
        tHigh: 1064.18,
        c: [
          0.0, 5.40313308631e-3, 1.2593428974e-5, -2.32477968689e-8, 3.22028823036e-11, -3.31465196389e-14,
          2.55744251786e-17, -1.25068871393e-20, 2.71443176145e-24,
        ],
      },
      {
        tLow: 1064.18,
        tHigh: 1664.5,
        c: [1.32900444085, 3.34509311344e-3, 6.54805192818e-6, -1.64856259209e-9, 1.29989605174e-14],
      },
      {
        tLow: 1664.5,
        tHigh: 1768.1,
        c: [1.46628232636e2, -2.58430516752e-1, 1.63693574641e-4, -3.30439046987e-8, -9.43223690612e-15],
      },
    ],
    inverse: [
      {
        tLow: -50,
        tHigh: 250,
        eLow: -0.235,
        eHigh: 1.874,
        errLow: -0.02,
        errHigh: 0.02,
        d: [
          0.0, 1.8494946e2, -8.00504062e1, 1.0223743e2, -1.52248592e2, 1.88821343e2, -1.59085941e2, 8.2302788e1,
          -2.34181944e1, 2.7978626,
        ],
      },
      {
        tLow: 250,
        tHigh: 1200,
        eLow: 1.874,
        eHigh: 10.332,
        errLow: -0.01,
        errHigh: 0.01,
        d: [
          1.291507177e1, 1.466298863e2, -1.534713402e1, 3.145945973, -4.163257839e-1, 3.187963771e-2, -1.2916375e-3,
          2.183475087e-5, -1.447379511e-7, 8.211272125e-9,
        ],
      },
      {
        tLow: 1064,
        tHigh: 1664.5,
        eLow: 10.332,
        eHigh: 17.536,
        errLow: -0.0002,
        errHigh: 0.0002,
        d: [-8.087801117e1, 1.621573104e2, -8.536869453, 4.719686976e-1, -1.441693666e-2, 2.08161889e-4],
      },
      {
        tLow: 1664.5,
        tHigh: 1768.1,
        eLow: 17.536,
        eHigh: 18.693,
        errLow: -0.002,
        errHigh: 0.002,
        d: [5.333875126e4, -1.235892298e4, 1.092657613e3, -4.265693686e1, 6.24720542e-1],
      },
    ],
  },
  T: {
    forward: [
      {
        tLow: -270,
        tHigh: 0,
        c: [
          0.0, 3.8748106364e-2, 4.4194434347e-5, 1.1844323105e-7, 2.0032973554e-8, 9.0138019559e-10, 2.2651156593e-11,
          3.6071154205e-13, 3.8493939883e-15, 2.8213521925e-17, 1.4251594779e-19, 4.8768662286e-22, 1.079553927e-24,
          1.3945027062e-27, 7.9795153927e-31,
        ],
      },
      {
        tLow: 0,
        tHigh: 400,
        c: [
          0.0, 3.8748106364e-2, 3.329222788e-5, 2.0618243404e-7, -2.1882256846e-9, 1.0996880928e-11, -3.0815758772e-14,
          4.547913529e-17, -2.7512901673e-20,
        ],
      },
    ],
    inverse: [
      {
        tLow: -200,
        tHigh: 0,
        eLow: -5.603,
        eHigh: 0,
        errLow: -0.02,
        errHigh: 0.04,
        d: [0.0, 2.5949192e1, -2.1316967e-1, 7.9018692e-1, 4.2527777e-1, 1.3304473e-1, 2.0241446e-2, 1.2668171e-3],
      },
      {
        tLow: 0,
        tHigh: 400,
        eLow: 0,
        eHigh: 20.872,
        errLow: -0.03,
        errHigh: 0.03,
        d: [0.0, 2.5928e1, -7.602961e-1, 4.637791e-2, -2.165394e-3, 6.048144e-5, -7.293422e-7],
      },
    ],
  },
}

// Type K exponential term, 0 °C ≤ t ≤ 1372 °C only: a0·exp(a1·(t − a2)²) [NIST SRD 60 via thermocouples.md]
const K_A0 = 0.1185976
const K_A1 = -0.1183432e-3
const K_A2 = 126.9686

// Type B inverse lower limit: NIST gives the inverse from 250 °C / 0.291 mV (thermocouples.md, valid ranges).
const B_EMF_MIN = 0.291

/** Half the last printed step of the NIST ITS-90 thermocouple tables (0.001 mV), mV. */
export const TABLE_EMF_HALF_STEP = 0.0005

const B_EXPLANATION =
  'a type B thermocouple gives almost no emf at low temperature: the emf falls slightly below zero ' +
  'from 0 °C to a minimum of about −0.0026 mV near 21 °C, is back at zero near 42 °C ' +
  'and reaches only about 0.033 mV at 100 °C, ' +
  'so a low emf matches two temperatures or is lost in the measurement error; ' +
  'NIST gives the type B inverse only from ' +
  '250 °C (0.291 mV) and the product does not convert emfs below that'

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
export interface TcRange {
  tMin: number
  tMax: number
  emfMin: number
  emfMax: number
}

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

function tRange(type: TcType): { tMin: number; tMax: number } {
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

/** t held to the type's range (see withinRange); `consequence` ends the explanation of a refusal. */
function clampToRange(type: TcType, t: number, quantity = 'temperature', consequence = ''): number {
  const { tMin, tMax } = tRange(type)
  const explain = () => `the type ${type} reference function is defined from ${tMin} to ${tMax} °C${consequence}`
  return withinRange(quantity, t, tMin, tMax, '°C', explain)
}

/**
 * ITS-90 emf E(t) in mV of a type at t °C with the reference junction at 0 °C;
 * throws OutOfRangeError outside the function's range.
 */
export function thermocoupleEmf(type: TcType, tC: number): number {
  checkType(type)
  return forwardRaw(type, clampToRange(type, tC))
}

/** Sensitivity dE/dt in mV/°C of a type at t °C (derivative of the reference function). */
export function thermocoupleSeebeck(type: TcType, tC: number): number {
  checkType(type)
  return derivativeRaw(type, clampToRange(type, tC))
}

/**
 * The NIST inverse polynomial value t(E) (approximate, within the stated error band),
 * or undefined outside its sub-ranges.
 */
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
  // Published table values at the range ends are rounded to 0.001 mV (NIST −6.458 mV at −270 °C for type K, where
  // the function gives −6.4577 mV): accept within half that step and clamp to the end.
  if (Number.isFinite(emfMv) && emfMv < range.emfMin && emfMv >= range.emfMin - TABLE_EMF_HALF_STEP) {
    emfMv = range.emfMin
  }
  if (Number.isFinite(emfMv) && emfMv > range.emfMax && emfMv <= range.emfMax + TABLE_EMF_HALF_STEP) {
    emfMv = range.emfMax
  }
  if (!Number.isFinite(emfMv) || emfMv < range.emfMin || emfMv > range.emfMax) {
    const explanation =
      type === 'B' && emfMv < range.emfMin
        ? B_EXPLANATION
        : `the type ${type} reference function covers ${range.tMin} to ${range.tMax} °C`
    throw new OutOfRangeError('emf', emfMv, range.emfMin, range.emfMax, 'mV', explanation)
  }
  if (type !== 'B' && emfMv === range.emfMin) return range.tMin
  if (emfMv === range.emfMax) return range.tMax
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

/**
 * mV a source must inject at the instrument terminals (cold junction at tCj °C) to simulate tHot °C:
 * E(tHot) − E(tCj).
 */
export function mvSourceValue(type: TcType, tHotC: number, tCjC: number): number {
  return thermocoupleEmf(type, tHotC) - coldJunctionEmf(type, tCjC)
}

/** E(tCj) of the cold junction; a cold junction outside the type's range is named as such in the error. */
function coldJunctionEmf(type: TcType, tCjC: number): number {
  checkType(type)
  const why = ', so it cannot compensate a cold junction at this temperature'
  return thermocoupleEmf(type, clampToRange(type, tCjC, 'cold-junction temperature', why))
}

/**
 * Hot-junction temperature in °C from an emf measured at terminals at tCj °C, by the emf-domain method:
 * t = t(E_meas + E(tCj)). (Adding tCj to t(E_meas) is wrong except for a linear thermocouple.)
 */
export function temperatureFromMeasured(type: TcType, emfMeasuredMv: number, tCjC: number): number {
  return thermocoupleTemperature(type, emfMeasuredMv + coldJunctionEmf(type, tCjC))
}
