// Decoding of Modbus register values (docs/domain/modbus-decoding.md).
//
// Byte order: the MODBUS Application Protocol Specification V1.1b3 (Modbus Organization, 2012), §4.2 "Data
// Encoding", sends every 16-bit register big-endian: the most significant byte first. A 32-bit value spans two
// consecutive registers; the specification leaves the order of the two words open, so each map entry states it:
// `high_first` (the register at the lower address holds the most significant word, "ABCD") or `low_first` ("CDAB").
// float32 is IEEE 754 binary32.

import type { ModbusDataType, WordOrder } from '../schemas/reconciliation.ts'

/** Registers one value of this type occupies. */
export function registerCount(dataType: ModbusDataType): 1 | 2 {
  return dataType === 'int32' || dataType === 'float32' ? 2 : 1
}

/** The 4 bytes of a 32-bit value in significance order (most significant first), from two registers. */
function bytes32(registers: readonly number[], wordOrder: WordOrder): DataView {
  const [a, b] = registers
  const [high, low] = wordOrder === 'high_first' ? [a, b] : [b, a]
  const view = new DataView(new ArrayBuffer(4))
  view.setUint16(0, high & 0xffff, false)
  view.setUint16(2, low & 0xffff, false)
  return view
}

/**
 * The number held by `registers` (each 0…65535, as read from the wire). Throws when too few registers are given or a
 * register is out of range.
 */
export function decodeRegisters(registers: readonly number[], dataType: ModbusDataType, wordOrder: WordOrder): number {
  const n = registerCount(dataType)
  if (registers.length < n) throw new RangeError(`${dataType} needs ${n} registers, got ${registers.length}`)
  for (const r of registers.slice(0, n))
    if (!Number.isInteger(r) || r < 0 || r > 0xffff) throw new RangeError(`Register value ${r} is not 0…65535`)
  switch (dataType) {
    case 'uint16':
      return registers[0]
    case 'int16':
      return registers[0] >= 0x8000 ? registers[0] - 0x10000 : registers[0]
    case 'int32':
      return bytes32(registers, wordOrder).getInt32(0, false)
    case 'float32':
      return bytes32(registers, wordOrder).getFloat32(0, false)
  }
}

/** The registers that hold `value` (the inverse of decodeRegisters; used by the simulated device). */
export function encodeRegisters(value: number, dataType: ModbusDataType, wordOrder: WordOrder): number[] {
  const view = new DataView(new ArrayBuffer(4))
  switch (dataType) {
    case 'uint16':
    case 'int16':
      return [Math.round(value) & 0xffff]
    case 'int32':
      view.setInt32(0, Math.round(value), false)
      break
    case 'float32':
      view.setFloat32(0, value, false)
      break
  }
  const high = view.getUint16(0, false)
  const low = view.getUint16(2, false)
  return wordOrder === 'high_first' ? [high, low] : [low, high]
}

/** Whether bit `bit` (0 = least significant) of a 16-bit register is set. */
export function registerBit(register: number, bit: number): boolean {
  return ((register >> bit) & 1) === 1
}

const PLAIN = /^(-?)(\d+)(?:\.(\d+))?$/

/**
 * raw × scale as an exact decimal string when both are exact (an integer register and a decimal scale such as
 * "0.1"), so 7805 × 0.1 gives "780.5" and never 780.5000000000001. A float raw value is multiplied as a number.
 */
export function scaleValue(raw: number, scale: string, dataType: ModbusDataType): string {
  const s = PLAIN.exec(scale.trim())
  if (dataType === 'float32' || !s || !Number.isInteger(raw)) {
    const v = raw * Number(scale)
    // a float32 keeps about 7 significant digits; more would show binary noise, not the device's value
    return dataType === 'float32' ? String(Number(v.toPrecision(7))) : String(v)
  }
  const [, sign, int, frac = ''] = s
  const digits = BigInt(int + frac) * BigInt(raw) * (sign === '-' ? -1n : 1n)
  const negative = digits < 0n
  let text = (negative ? -digits : digits).toString().padStart(frac.length + 1, '0')
  if (frac.length) text = `${text.slice(0, -frac.length)}.${text.slice(-frac.length)}`
  return normalizeDecimal((negative ? '-' : '') + text)
}

/** A decimal string in one spelling: no leading "+", no needless zeros, "-0" is "0" ("780.50" → "780.5"). */
export function normalizeDecimal(text: string): string {
  const t = text.trim().replace(/^\+/, '')
  const m = PLAIN.exec(t)
  if (!m) {
    const n = Number(t)
    return Number.isFinite(n) && t !== '' ? normalizeDecimal(toPlain(n)) : t
  }
  const [, sign, int, frac = ''] = m
  const i = int.replace(/^0+(?=\d)/, '')
  const f = frac.replace(/0+$/, '')
  const out = f ? `${i}.${f}` : i
  return out === '0' ? '0' : `${sign}${out}`
}

/** A finite number as plain decimal text (no exponent). */
function toPlain(n: number): string {
  const s = String(n)
  if (!/e/i.test(s)) return s
  return n.toFixed(20).replace(/\.?0+$/, '')
}
