import { describe, expect, it } from 'vitest'
import {
  decodeRegisters,
  encodeRegisters,
  normalizeDecimal,
  registerBit,
  scaleValue,
} from '../../../shared/domain/modbus-decode.ts'

// Expected values worked by hand from the MODBUS Application Protocol Specification V1.1b3, §4.2 "Data Encoding"
// (big-endian: the most significant byte of a register first) and IEEE 754 binary32 for float32. The two registers
// of a 32-bit value: high_first = the lower address holds the most significant word ("ABCD"), low_first = "CDAB".
//
// float32 780.0: 780 = 1.5234375 × 2^9; exponent 9 + 127 = 136 = 1000 1000b; fraction .5234375 = .1000011b
//   → 0 10001000 10000110000000000000000 = 0x4443 0000
// float32 -12.5: -1.5625 × 2^3; sign 1, exponent 130 = 1000 0010b, fraction .1001b → 0xC148 0000
// float32 0.1: nearest binary32 is 0x3DCC CCCD = 0.100000001490116… (IEEE 754 round to nearest even)
// int32 100000 = 0x0001 86A0; int32 -2 = 0xFFFF FFFE (two's complement)
// int16 0xFF38 = 65336 - 65536 = -200; uint16 0xFF38 = 65336

describe('decodeRegisters (Modbus big-endian registers, word order per map entry)', () => {
  const cases: [string, number[], Parameters<typeof decodeRegisters>[1], 'high_first' | 'low_first', number][] = [
    ['uint16 0x0000', [0x0000], 'uint16', 'high_first', 0],
    ['uint16 0xFF38', [0xff38], 'uint16', 'high_first', 65336],
    ['uint16 0xFFFF', [0xffff], 'uint16', 'high_first', 65535],
    ['int16 0x7FFF', [0x7fff], 'int16', 'high_first', 32767],
    ['int16 0x8000', [0x8000], 'int16', 'high_first', -32768],
    ['int16 0xFF38', [0xff38], 'int16', 'high_first', -200],
    ['int16 0x1E7D', [0x1e7d], 'int16', 'high_first', 7805],
    ['int32 100000 high first', [0x0001, 0x86a0], 'int32', 'high_first', 100000],
    ['int32 100000 low first', [0x86a0, 0x0001], 'int32', 'low_first', 100000],
    ['int32 -2 high first', [0xffff, 0xfffe], 'int32', 'high_first', -2],
    ['int32 -2 low first', [0xfffe, 0xffff], 'int32', 'low_first', -2],
    ['int32 0x8000 0000', [0x8000, 0x0000], 'int32', 'high_first', -2147483648],
    ['float32 780.0 high first', [0x4443, 0x0000], 'float32', 'high_first', 780],
    ['float32 780.0 low first', [0x0000, 0x4443], 'float32', 'low_first', 780],
    ['float32 -12.5 high first', [0xc148, 0x0000], 'float32', 'high_first', -12.5],
    ['float32 -12.5 low first', [0x0000, 0xc148], 'float32', 'low_first', -12.5],
    ['float32 1.0 = 0x3F80 0000', [0x3f80, 0x0000], 'float32', 'high_first', 1],
  ]
  it.each(cases)('%s', (_name, regs, type, order, expected) => {
    expect(decodeRegisters(regs, type, order)).toBe(expected)
  })

  it('float32 0x3DCC CCCD is the binary32 nearest 0.1, not 0.1 itself', () => {
    const v = decodeRegisters([0x3dcc, 0xcccd], 'float32', 'high_first')
    expect(v).not.toBe(0.1)
    expect(v).toBeCloseTo(0.100000001490116, 15)
  })

  it('the same two registers read in the other word order give another number', () => {
    expect(decodeRegisters([0x4443, 0x0000], 'float32', 'low_first')).not.toBe(780)
    expect(decodeRegisters([0x0001, 0x86a0], 'int32', 'low_first')).toBe(0x86a00001 - 2 ** 32)
  })

  it('refuses too few registers and values outside 0…65535', () => {
    expect(() => decodeRegisters([0x4443], 'float32', 'high_first')).toThrow(/needs 2 registers/)
    expect(() => decodeRegisters([70000], 'uint16', 'high_first')).toThrow(/not 0…65535/)
    expect(() => decodeRegisters([-1], 'int16', 'high_first')).toThrow(/not 0…65535/)
  })

  it('encodeRegisters gives back the hand-worked registers', () => {
    expect(encodeRegisters(780, 'float32', 'high_first')).toEqual([0x4443, 0x0000])
    expect(encodeRegisters(780, 'float32', 'low_first')).toEqual([0x0000, 0x4443])
    expect(encodeRegisters(-2, 'int32', 'high_first')).toEqual([0xffff, 0xfffe])
    expect(encodeRegisters(-200, 'int16', 'high_first')).toEqual([0xff38])
  })
})

describe('flags and scaling', () => {
  it('reads a bit of a status word (bit 0 = least significant)', () => {
    expect(registerBit(0b0000_0000_0000_0100, 2)).toBe(true)
    expect(registerBit(0b0000_0000_0000_0100, 1)).toBe(false)
    expect(registerBit(0x8000, 15)).toBe(true)
  })
  it('scales integer registers exactly (7803 × 0.1 = 780.3, not 780.3000000000001)', () => {
    expect(7803 * 0.1).not.toBe(780.3) // binary floating point: why the decimal path exists
    expect(scaleValue(7803, '0.1', 'int16')).toBe('780.3')
    expect(scaleValue(1203, '0.01', 'int16')).toBe('12.03')
    expect(scaleValue(-200, '0.01', 'int16')).toBe('-2')
    expect(scaleValue(5, '0.01', 'uint16')).toBe('0.05')
    expect(scaleValue(12, '1', 'uint16')).toBe('12')
    expect(scaleValue(3, '-2', 'int16')).toBe('-6')
  })
  it('shows a float32 with 7 significant digits', () => {
    const f = decodeRegisters([0x3dcc, 0xcccd], 'float32', 'high_first')
    expect(scaleValue(f, '1', 'float32')).toBe('0.1')
  })
  it('normalizes decimal spellings', () => {
    expect(normalizeDecimal('780.50')).toBe('780.5')
    expect(normalizeDecimal('+007.0')).toBe('7')
    expect(normalizeDecimal('-0.000')).toBe('0')
    expect(normalizeDecimal('7.8E2')).toBe('780')
    expect(normalizeDecimal('0.05')).toBe('0.05')
  })
})
